"""Request and response models of the HTTP API; the direction is in every name.

Bounds come from stepfence.limits (through Settings) and are stated in each field's
description, so /openapi.json documents them.
"""
from __future__ import annotations

from typing import Annotated, Any, Literal, Optional, Union

from pydantic import BaseModel, ConfigDict, Field

from .. import limits
from ..analysis.accuracy_limit import TABLE_LIMIT

FiniteFloat = Annotated[float, Field(allow_inf_nan=False)]
Pair = tuple[FiniteFloat, FiniteFloat]
SchemeName = Annotated[str, Field(min_length=1, max_length=200,
                                  description="catalogue name: bdf4, rk4, ab3, abm4-pece, rkc10 ...")]
NumberList = Union[Annotated[str, Field(max_length=limits.MAX_TEXT_CHARS)],
                   list[Union[str, int, float]]]
EigenvalueInput = Union[
    Annotated[str, Field(max_length=limits.MAX_BODY_BYTES,
                         description="text: one value per line or comma separated, e.g. "
                                     "'-1, -2+3i'")],
    Annotated[list[Pair], Field(max_length=limits.MAX_EIGENVALUES,
                                description=f"[[re, im], ...], at most {limits.MAX_EIGENVALUES}")],
]


class SchemeSpec(BaseModel):
    """A scheme given by one of: name | rho+sigma | alpha+beta | tableau | stability |
    predictor+corrector (see stepfence.specs)."""

    model_config = ConfigDict(extra="forbid")

    name: Optional[SchemeName] = None
    rho: Optional[Annotated[str, Field(max_length=limits.MAX_TEXT_CHARS,
                                       description="rho(zeta) as polynomial text, e.g. 'z^2 - z'")]] = None
    sigma: Optional[Annotated[str, Field(max_length=limits.MAX_TEXT_CHARS,
                                         description="sigma(zeta), e.g. '3/2 z - 1/2'")]] = None
    alpha: Optional[NumberList] = Field(None, description="alpha_0..alpha_k, ascending: '-1, 1'")
    beta: Optional[NumberList] = Field(None, description="beta_0..beta_k, ascending: '1/2, 1/2'")
    tableau: Optional[dict[str, Any]] = Field(
        None, description=f"Butcher tableau {{A, b, c}} of exact number texts; at most "
                          f"{limits.MAX_STAGES} stages")
    stability: Optional[Annotated[str, Field(max_length=limits.MAX_TEXT_CHARS)]] = Field(
        None, description="stability function R(z) as rational text, e.g. '(1+z/2)/(1-z/2)'")
    stages: Optional[int] = Field(None, ge=1, le=64, description="stages behind R(z), for cost")
    predictor: Optional[Union[SchemeName, "SchemeSpec"]] = None
    corrector: Optional[Union[SchemeName, "SchemeSpec"]] = None
    m: Optional[int] = Field(None, ge=1, le=limits.MAX_CORRECTIONS, description="corrections")
    mode: Optional[Literal["PECE", "PEC"]] = None

    def to_spec(self) -> dict:
        """Return the plain dict stepfence.specs.scheme_from_spec reads."""
        out = {}
        for k, v in self:
            if v is None:
                continue
            out[k] = v.to_spec() if isinstance(v, SchemeSpec) else v
        return out


SchemeInput = Union[SchemeName, SchemeSpec]


class ViewBox(BaseModel):
    """A rectangle of the z = h*lambda plane."""

    xlim: tuple[FiniteFloat, FiniteFloat]
    ylim: tuple[FiniteFloat, FiniteFloat]


# --- catalogue -------------------------------------------------------------------------

class CatalogueEntry(BaseModel):
    name: str
    label: str
    family: str
    kind: str
    order: Optional[int] = Field(None, description="null while still being derived")
    steps: int
    stages: int
    explicit: bool
    evaluations_per_step: int


class CatalogueFamily(BaseModel):
    family: str
    schemes: list[CatalogueEntry]


class CatalogueResponse(BaseModel):
    families: list[CatalogueFamily]
    complete: bool = Field(description="false while orders are still being derived in the "
                                       "background; ask again")
    pending: int
    parametrised: list[str]
    cautions: list[str]


# --- analyse ---------------------------------------------------------------------------

class AnalyseRequest(BaseModel):
    model_config = ConfigDict(extra="forbid")

    scheme: SchemeInput
    view: Optional[ViewBox] = None
    grid: int = Field(240, ge=16,
                      description=f"raster cells along x, 16..{limits.MAX_GRID}")
    parts: list[Literal["describe", "region"]] = Field(
        default_factory=lambda: ["describe", "region"], min_length=1,
        description="what to compute: the region alone answers fast enough to redraw while "
                    "typing; describe (order, constants, intervals, angle) takes longer")


class RegionBranch(BaseModel):
    x: list[Optional[float]]
    y: list[Optional[float]]


class RegionRaster(BaseModel):
    x: list[float]
    y: list[float]
    stable: list[list[int]] = Field(description="rows (one per y) of 1 = stable, 0 = not")


class RegionResponse(BaseModel):
    xlim: tuple[float, float]
    ylim: tuple[float, float]
    branches: list[RegionBranch] = Field(description="boundary locus; null breaks a line")
    raster: RegionRaster


class AnalyseResponse(BaseModel):
    describe: Optional[dict[str, Any]] = Field(
        None, description="stepfence.report.describe keys: order, error_constant, "
                          "real_interval, imag_interval, a_alpha_deg, zero_stable ...")
    region: Optional[RegionResponse] = None
    stencil: Optional[dict[str, Any]] = Field(
        None, description="with describe: c_values (stage times as numbers) and parts (the "
                          "predictor's and corrector's coefficients)")
    elapsed_ms: float


# --- spectra ---------------------------------------------------------------------------

class SpectrumParseRequest(BaseModel):
    model_config = ConfigDict(extra="forbid")

    text: Annotated[str, Field(max_length=limits.MAX_BODY_BYTES,
                               description="eigenvalues as text: '-1', '-2+3i', '(-1, 2)' ... "
                                           "one per line or comma separated")]


class SpectrumModelRequest(BaseModel):
    model_config = ConfigDict(extra="forbid")

    kind: Annotated[str, Field(min_length=1, max_length=100, description="a key of GET "
                                                                          "/api/spectrum/models")]
    n: int = Field(ge=1, le=limits.MAX_EIGENVALUES, description="unknowns (cells, nodes)")
    params: dict[str, Union[FiniteFloat, int, str, bool]] = Field(default_factory=dict)


class SpectrumResponse(BaseModel):
    values: list[tuple[float, float]]
    count: int
    extremes: dict[str, Any] = Field(description="extreme eigenvalues: most negative real part, "
                                                 "largest modulus, largest |imag| ...")
    notes: list[str]
    source: str
    partial: bool = Field(False, description="true when only part of the spectrum was computed")


class ModelParam(BaseModel):
    name: str
    default: Any = None
    description: str = ""
    choices: list[str] = Field(default_factory=list, description="allowed values of a text parameter")


class ModelEntry(BaseModel):
    kind: str
    description: str
    params: list[ModelParam]
    n_default: Optional[int] = None


class ModelsResponse(BaseModel):
    models: list[ModelEntry]


# --- jobs ------------------------------------------------------------------------------

JobState = Literal["queued", "reading", "solving", "done", "failed", "cancelled", "timed-out"]


class JobResponse(BaseModel):
    id: str
    state: JobState
    progress: float = Field(ge=0, le=1, description="by stage: queued 0, reading 0.1, solving 0.3, "
                                                    "done 1 (a dense solve reports no finer steps)")
    message: str
    elapsed_seconds: float
    time_limit_seconds: float
    filename: str
    result: Optional[SpectrumResponse] = None
    error: Optional[dict[str, Any]] = None


# --- limit -----------------------------------------------------------------------------

class LimitRequest(BaseModel):
    model_config = ConfigDict(extra="forbid")

    scheme: SchemeInput
    eigenvalues: EigenvalueInput
    safety: Optional[FiniteFloat] = Field(None, gt=0, le=1, description="factor in (0, 1] shown "
                                                                        "beside h_max")
    per_eigenvalue: bool = Field(False, description="include each eigenvalue's own h_max")


class Caution(BaseModel):
    key: str
    text: str


class LimitResponse(BaseModel):
    scheme: str
    h_max: Optional[float] = Field(description="null when unbounded")
    unbounded: bool
    binding_eigenvalue: Optional[tuple[float, float]]
    binding_index: Optional[int]
    windows: list[tuple[float, Optional[float]]]
    evaluations_per_step: int
    h_max_per_evaluation: Optional[float]
    safety: Optional[float]
    h_safe: Optional[float]
    count: int
    zero_eigenvalues: int
    growing_eigenvalues: int
    zero_stable: bool
    messages: list[str]
    summary: str
    per_eigenvalue: Optional[list[Optional[float]]] = Field(
        None, description="h_max of each eigenvalue (first window end); null = no bound")
    cautions: list[Caution]
    elapsed_ms: float


# --- verify ----------------------------------------------------------------------------

class VerifyRequest(BaseModel):
    model_config = ConfigDict(extra="forbid")

    scheme: SchemeInput
    h: FiniteFloat = Field(gt=0, description="step size")
    eigenvalues: Optional[EigenvalueInput] = Field(None, description="step the diagonal system")
    job: Optional[Annotated[str, Field(max_length=64)]] = Field(
        None, description="id of a finished matrix job: step u' = J u with that matrix "
                          f"(at most {limits.MAX_VERIFY_N} unknowns)")
    steps: int = Field(200, ge=1, le=limits.MAX_VERIFY_STEPS)


class VerifyResponse(BaseModel):
    h: float
    steps: int
    norms: list[Optional[float]] = Field(description="||u_n|| / ||u_0||; null after overflow")
    observed_growth_per_step: Optional[float]
    predicted_growth: Optional[float]
    verdict: str
    max_transient: Optional[float]
    notes: list[str]
    source: str = Field(description="'matrix' or 'eigenvalues'")
    elapsed_ms: float


class HealthResponse(BaseModel):
    status: Literal["ok"]
    version: str
    catalogue_ready: bool


# --- accuracy --------------------------------------------------------------------------

class AccuracyRequest(BaseModel):
    model_config = ConfigDict(extra="forbid")

    scheme: SchemeInput
    eigenvalues: EigenvalueInput
    h: Optional[FiniteFloat] = Field(None, gt=0, description="step for the along-spectrum table; "
                                                             "by default the binding limit")
    tol: FiniteFloat = Field(1e-6, gt=0, lt=1, description="local error tolerance in (0, 1); per "
                                                           "step at most 0.5")
    per: Literal["step", "unit-time"] = Field(
        "step", description="tol per step, or per unit time (error per step divided by h)")
    other: Optional[SchemeInput] = Field(None, description="a second scheme: compare the work "
                                                           "per f-evaluation at equal accuracy")


class AccuracyResponse(BaseModel):
    scheme: dict[str, Any] = Field(description="name, label, kind, linear_order, "
                                               "principal_error_constant ...")
    conventions: dict[str, str]
    tol: float
    per: Literal["step", "unit-time"]
    stability_limit: dict[str, Any] = Field(description="h_max (null: unbounded), binding eigenvalue")
    accuracy_limit: dict[str, Any] = Field(description="h_max (null: unbounded), binding eigenvalue, "
                                                       "asymptotic_h_max")
    binding: Optional[str] = Field(description="'stability', 'accuracy', 'both' or 'neither'")
    h_binding: Optional[float]
    verdict: str = Field(description="which limit binds, both numbers in one sentence")
    stiffness_ratio: Optional[float] = Field(description="max/min |Re lambda| of the decaying modes")
    h: float
    h_source: str
    at_h: dict[str, Any] = Field(description="stable, max_relative_error, tolerance, "
                                             "meets_tolerance at the step h")
    spectrum: dict[str, Any] = Field(description=f"the along-spectrum table at h, at most "
                                                 f"{TABLE_LIMIT} rows (the worst when truncated)")
    imaginary_axis: dict[str, Any] = Field(description="omega_h, amplitude_error, phase_error, "
                                                       "spurious_max ... (null: undetermined)")
    comparison: Optional[dict[str, Any]] = Field(description="with other: work per f-evaluation "
                                                             "at equal accuracy")
    messages: list[str]
    cautions: list[str]
    elapsed_ms: float
