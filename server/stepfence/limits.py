"""Documented bounds on every input; the HTTP layer, the CLI and the parsers share them."""
MAX_STEPS = 12                 # multistep k
MAX_STAGES = 16                # Runge-Kutta s
MAX_RKC_STAGES = 200           # Runge-Kutta-Chebyshev stability polynomials
MAX_POLY_DEGREE = 64           # degree of any parsed polynomial
MAX_TEXT_CHARS = 20_000        # one polynomial / number text field
MAX_CORRECTIONS = 3            # m in P(EC)^m E and P(EC)^m
MAX_EIGENVALUES = 2_000_000    # one spectrum
MAX_DENSE_N = 4_000            # dense eigenvalue problem
MAX_SPARSE_N = 2_000_000       # sparse matrix order
MAX_SPARSE_NNZ = 20_000_000    # sparse nonzeros
MAX_UPLOAD_BYTES = 64 * 2**20  # one uploaded file
MAX_BODY_BYTES = 64 * 2**20    # one request body
MAX_GRID = 800                 # region raster per side
MAX_LOCUS_POINTS = 20_000      # boundary-locus samples
MAX_VERIFY_STEPS = 100_000     # stepping verification
MAX_VERIFY_N = 4_000           # unknowns stepped in verification
MAX_JOB_SECONDS = 120          # heavy background job time limit
