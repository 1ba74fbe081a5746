"""Published Runge-Kutta coefficients: data only, read by stepfence.schemes.butcher.

Each entry of TABLEAUX maps a catalogue name to

    A, b, c      rows and vectors of exact number strings (the strict parser reads them)
    b_embedded   weights of the embedded solution of a pair (optional)
    fsal         first same as last (optional, default False)
    label        human name
    family       "explicit RK" or "implicit RK"
    order        order of the propagated solution as published
    order_embedded  order of the embedded solution as published (pairs only)
    source       the publication the coefficients come from

The coefficients are typed from the publications named beside each entry (for the implicit
families in the form they are reprinted in Hairer & Wanner, Solving Ordinary Differential
Equations II, 2nd ed., Springer 1996, section IV.5, and Butcher, Numerical Methods for
Ordinary Differential Equations, 2nd ed., Wiley 2008). tests/test_rk_order.py confirms every
published order from the rooted-tree order conditions, exactly.
"""

TABLEAUX = {
    # L. Euler, Institutionum calculi integralis, vol. I, 1768: the forward Euler method.
    "euler": {
        "A": [["0"]],
        "b": ["1"],
        "c": ["0"],
        "label": "Forward Euler",
        "family": "explicit RK",
        "order": 1,
        "source": "L. Euler, Institutionum calculi integralis, vol. I, 1768",
    },
    # K. Heun, Neue Methode zur approximativen Integration der Differentialgleichungen einer
    # unabhaengigen Veraenderlichen, Z. Math. Phys. 45 (1900) 23-38: the explicit trapezoid.
    "heun": {
        "A": [["0", "0"],
              ["1", "0"]],
        "b": ["1/2", "1/2"],
        "c": ["0", "1"],
        "label": "Heun (explicit trapezoid)",
        "family": "explicit RK",
        "order": 2,
        "source": "K. Heun, Z. Math. Phys. 45 (1900) 23-38",
    },
    # C. Runge, Ueber die numerische Aufloesung von Differentialgleichungen, Math. Ann. 46
    # (1895) 167-178: the explicit midpoint rule.
    "midpoint": {
        "A": [["0", "0"],
              ["1/2", "0"]],
        "b": ["0", "1"],
        "c": ["0", "1/2"],
        "label": "Explicit midpoint (Runge)",
        "family": "explicit RK",
        "order": 2,
        "source": "C. Runge, Math. Ann. 46 (1895) 167-178",
    },
    # A. Ralston, Runge-Kutta methods with minimum error bounds, Math. Comp. 16 (1962)
    # 431-437: the second-order method with c_2 = a_21 = 2/3.
    "ralston": {
        "A": [["0", "0"],
              ["2/3", "0"]],
        "b": ["1/4", "3/4"],
        "c": ["0", "2/3"],
        "label": "Ralston (second order)",
        "family": "explicit RK",
        "order": 2,
        "source": "A. Ralston, Math. Comp. 16 (1962) 431-437",
    },
    # W. Kutta, Beitrag zur naeherungsweisen Integration totaler Differentialgleichungen,
    # Z. Math. Phys. 46 (1901) 435-453: the third-order method with c = 0, 1/2, 1.
    "kutta3": {
        "A": [["0", "0", "0"],
              ["1/2", "0", "0"],
              ["-1", "2", "0"]],
        "b": ["1/6", "2/3", "1/6"],
        "c": ["0", "1/2", "1"],
        "label": "Kutta third order",
        "family": "explicit RK",
        "order": 3,
        "source": "W. Kutta, Z. Math. Phys. 46 (1901) 435-453",
    },
    # C.-W. Shu, S. Osher, Efficient implementation of essentially non-oscillatory
    # shock-capturing schemes, J. Comput. Phys. 77 (1988) 439-471: SSP(3,3).
    "ssprk3": {
        "A": [["0", "0", "0"],
              ["1", "0", "0"],
              ["1/4", "1/4", "0"]],
        "b": ["1/6", "1/6", "2/3"],
        "c": ["0", "1", "1/2"],
        "label": "SSP(3,3) (Shu-Osher)",
        "family": "explicit RK",
        "order": 3,
        "source": "C.-W. Shu, S. Osher, J. Comput. Phys. 77 (1988) 439-471",
    },
    # W. Kutta, Z. Math. Phys. 46 (1901) 435-453: the classical fourth-order method.
    "rk4": {
        "A": [["0", "0", "0", "0"],
              ["1/2", "0", "0", "0"],
              ["0", "1/2", "0", "0"],
              ["0", "0", "1", "0"]],
        "b": ["1/6", "1/3", "1/3", "1/6"],
        "c": ["0", "1/2", "1/2", "1"],
        "label": "Classical Runge-Kutta (RK4)",
        "family": "explicit RK",
        "order": 4,
        "source": "W. Kutta, Z. Math. Phys. 46 (1901) 435-453",
    },
    # W. Kutta, Z. Math. Phys. 46 (1901) 435-453: the 3/8 rule.
    "rk38": {
        "A": [["0", "0", "0", "0"],
              ["1/3", "0", "0", "0"],
              ["-1/3", "1", "0", "0"],
              ["1", "-1", "1", "0"]],
        "b": ["1/8", "3/8", "3/8", "1/8"],
        "c": ["0", "1/3", "2/3", "1"],
        "label": "Kutta 3/8 rule",
        "family": "explicit RK",
        "order": 4,
        "source": "W. Kutta, Z. Math. Phys. 46 (1901) 435-453",
    },
    # P. Bogacki, L. F. Shampine, A 3(2) pair of Runge-Kutta formulas, Appl. Math. Lett. 2
    # (1989) 321-325: third-order solution propagated, second-order embedded, FSAL.
    "bs3": {
        "A": [["0", "0", "0", "0"],
              ["1/2", "0", "0", "0"],
              ["0", "3/4", "0", "0"],
              ["2/9", "1/3", "4/9", "0"]],
        "b": ["2/9", "1/3", "4/9", "0"],
        "b_embedded": ["7/24", "1/4", "1/3", "1/8"],
        "c": ["0", "1/2", "3/4", "1"],
        "fsal": True,
        "label": "Bogacki-Shampine 3(2)",
        "family": "explicit RK",
        "order": 3,
        "order_embedded": 2,
        "source": "P. Bogacki, L. F. Shampine, Appl. Math. Lett. 2 (1989) 321-325",
    },
    # J. R. Dormand, P. J. Prince, A family of embedded Runge-Kutta formulae, J. Comput. Appl.
    # Math. 6 (1980) 19-26: RK5(4)7M, fifth-order solution propagated, FSAL.
    "dopri5": {
        "A": [["0", "0", "0", "0", "0", "0", "0"],
              ["1/5", "0", "0", "0", "0", "0", "0"],
              ["3/40", "9/40", "0", "0", "0", "0", "0"],
              ["44/45", "-56/15", "32/9", "0", "0", "0", "0"],
              ["19372/6561", "-25360/2187", "64448/6561", "-212/729", "0", "0", "0"],
              ["9017/3168", "-355/33", "46732/5247", "49/176", "-5103/18656", "0", "0"],
              ["35/384", "0", "500/1113", "125/192", "-2187/6784", "11/84", "0"]],
        "b": ["35/384", "0", "500/1113", "125/192", "-2187/6784", "11/84", "0"],
        "b_embedded": ["5179/57600", "0", "7571/16695", "393/640", "-92097/339200",
                       "187/2100", "1/40"],
        "c": ["0", "1/5", "3/10", "4/5", "8/9", "1", "1"],
        "fsal": True,
        "label": "Dormand-Prince 5(4)",
        "family": "explicit RK",
        "order": 5,
        "order_embedded": 4,
        "source": "J. R. Dormand, P. J. Prince, J. Comput. Appl. Math. 6 (1980) 19-26",
    },
    # The implicit midpoint rule, the one-stage Gauss-Legendre method; J. C. Butcher,
    # Implicit Runge-Kutta processes, Math. Comp. 18 (1964) 50-64.
    "gauss2": {
        "A": [["1/2"]],
        "b": ["1"],
        "c": ["1/2"],
        "label": "Implicit midpoint (Gauss-Legendre, 1 stage)",
        "family": "implicit RK",
        "order": 2,
        "source": "J. C. Butcher, Math. Comp. 18 (1964) 50-64",
    },
    # P. C. Hammer, J. W. Hollingsworth, Trapezoidal methods of approximating solutions of
    # differential equations, MTAC 9 (1955) 92-96; J. C. Butcher, Math. Comp. 18 (1964)
    # 50-64: two-stage Gauss-Legendre, order 4.
    "gauss4": {
        "A": [["1/4", "1/4 - sqrt(3)/6"],
              ["1/4 + sqrt(3)/6", "1/4"]],
        "b": ["1/2", "1/2"],
        "c": ["1/2 - sqrt(3)/6", "1/2 + sqrt(3)/6"],
        "label": "Gauss-Legendre, 2 stages",
        "family": "implicit RK",
        "order": 4,
        "source": "P. C. Hammer, J. W. Hollingsworth, MTAC 9 (1955) 92-96; "
                  "J. C. Butcher, Math. Comp. 18 (1964) 50-64",
    },
    # J. C. Butcher, Implicit Runge-Kutta processes, Math. Comp. 18 (1964) 50-64:
    # three-stage Gauss-Legendre, order 6.
    "gauss6": {
        "A": [["5/36", "2/9 - sqrt(15)/15", "5/36 - sqrt(15)/30"],
              ["5/36 + sqrt(15)/24", "2/9", "5/36 - sqrt(15)/24"],
              ["5/36 + sqrt(15)/30", "2/9 + sqrt(15)/15", "5/36"]],
        "b": ["5/18", "4/9", "5/18"],
        "c": ["1/2 - sqrt(15)/10", "1/2", "1/2 + sqrt(15)/10"],
        "label": "Gauss-Legendre, 3 stages",
        "family": "implicit RK",
        "order": 6,
        "source": "J. C. Butcher, Math. Comp. 18 (1964) 50-64",
    },
    # B. L. Ehle, On Pade approximations to the exponential function and A-stable methods
    # for the numerical solution of initial value problems, Research Report CSRR 2010,
    # University of Waterloo 1969: Radau IIA, 2 stages, order 3 (reprinted in Hairer &
    # Wanner II, section IV.5).
    "radau3": {
        "A": [["5/12", "-1/12"],
              ["3/4", "1/4"]],
        "b": ["3/4", "1/4"],
        "c": ["1/3", "1"],
        "label": "Radau IIA, 2 stages",
        "family": "implicit RK",
        "order": 3,
        "source": "B. L. Ehle, Research Report CSRR 2010, Univ. Waterloo 1969",
    },
    # B. L. Ehle, Research Report CSRR 2010, University of Waterloo 1969: Radau IIA,
    # 3 stages, order 5 (Hairer & Wanner II, Table IV.5.6).
    "radau5": {
        "A": [["(88 - 7*sqrt(6))/360", "(296 - 169*sqrt(6))/1800", "(-2 + 3*sqrt(6))/225"],
              ["(296 + 169*sqrt(6))/1800", "(88 + 7*sqrt(6))/360", "(-2 - 3*sqrt(6))/225"],
              ["(16 - sqrt(6))/36", "(16 + sqrt(6))/36", "1/9"]],
        "b": ["(16 - sqrt(6))/36", "(16 + sqrt(6))/36", "1/9"],
        "c": ["(4 - sqrt(6))/10", "(4 + sqrt(6))/10", "1"],
        "label": "Radau IIA, 3 stages",
        "family": "implicit RK",
        "order": 5,
        "source": "B. L. Ehle, Research Report CSRR 2010, Univ. Waterloo 1969; "
                  "Hairer & Wanner, Solving ODEs II, 2nd ed., Table IV.5.6",
    },
    # F. H. Chipman, A-stable Runge-Kutta processes, BIT 11 (1971) 384-388: Lobatto IIIC,
    # 2 stages, order 2 (reprinted in Hairer & Wanner II, section IV.5).
    "lobatto3c2": {
        "A": [["1/2", "-1/2"],
              ["1/2", "1/2"]],
        "b": ["1/2", "1/2"],
        "c": ["0", "1"],
        "label": "Lobatto IIIC, 2 stages",
        "family": "implicit RK",
        "order": 2,
        "source": "F. H. Chipman, BIT 11 (1971) 384-388",
    },
    # F. H. Chipman, BIT 11 (1971) 384-388: Lobatto IIIC, 3 stages, order 4
    # (reprinted in Hairer & Wanner II, section IV.5).
    "lobatto3c4": {
        "A": [["1/6", "-1/3", "1/6"],
              ["1/6", "5/12", "-1/12"],
              ["1/6", "2/3", "1/6"]],
        "b": ["1/6", "2/3", "1/6"],
        "c": ["0", "1/2", "1"],
        "label": "Lobatto IIIC, 3 stages",
        "family": "implicit RK",
        "order": 4,
        "source": "F. H. Chipman, BIT 11 (1971) 384-388",
    },
    # R. Alexander, Diagonally implicit Runge-Kutta methods for stiff O.D.E.'s, SIAM J.
    # Numer. Anal. 14 (1977) 1006-1021: two-stage, L-stable, stiffly accurate, order 2,
    # gamma = 1 - sqrt(2)/2.
    "sdirk2": {
        "A": [["1 - sqrt(2)/2", "0"],
              ["sqrt(2)/2", "1 - sqrt(2)/2"]],
        "b": ["sqrt(2)/2", "1 - sqrt(2)/2"],
        "c": ["1 - sqrt(2)/2", "1"],
        "label": "SDIRK, 2 stages, order 2, L-stable (Alexander)",
        "family": "implicit RK",
        "order": 2,
        "source": "R. Alexander, SIAM J. Numer. Anal. 14 (1977) 1006-1021",
    },
    # S. P. Norsett, Semi-explicit Runge-Kutta methods, Report Math. Comp. 6/74, Univ.
    # Trondheim 1974; M. Crouzeix, Sur l'approximation des equations differentielles
    # operationnelles lineaires par des methodes de Runge-Kutta, thesis, Paris VI 1975:
    # two stages, order 3, gamma = (3 + sqrt(3))/6, A-stable.
    "sdirk3": {
        "A": [["(3 + sqrt(3))/6", "0"],
              ["-sqrt(3)/3", "(3 + sqrt(3))/6"]],
        "b": ["1/2", "1/2"],
        "c": ["(3 + sqrt(3))/6", "(3 - sqrt(3))/6"],
        "label": "SDIRK, 2 stages, order 3, A-stable (Norsett-Crouzeix)",
        "family": "implicit RK",
        "order": 3,
        "source": "S. P. Norsett, Report Math. Comp. 6/74, Univ. Trondheim 1974; "
                  "M. Crouzeix, thesis, Univ. Paris VI 1975",
    },
}
