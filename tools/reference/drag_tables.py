#!/usr/bin/env python3
"""Independent reference tables for turbid's single-particle drag laws.

Writes two CSV files read by the validation tests (crate `turbid-validation`):

* tests/data/drag_coefficients.csv
    C_D(Re) of every drag law at fixed Reynolds numbers.
* tests/data/terminal_velocity_quartz_20C.csv
    terminal settling velocity and Reynolds number of quartz spheres
    (rho_p = 2650 kg/m^3) in water at 20 degC, 0.101325 MPa, for every law.

This is a second implementation, written separately from the Rust code and on
purpose with different numerics, so that agreement means something:

* terminal velocities come from scipy.optimize.brentq on the force balance in
  the velocity itself (buoyant weight = C_D(Re(v)) * 1/2 rho_f v^2 * pi d^2/4),
  whereas the engine solves the Best-number equation C_D Re^2 = 4/3 Ar in
  log Re;
* the Ferguson & Church drag coefficient is obtained by solving their settling
  law for the Archimedes number numerically (brentq), whereas the engine uses
  a closed form;
* water density and viscosity come from the `iapws` package (IAPWS-95 density,
  IAPWS 2008 viscosity), not from turbid's own water module.

Run from the workspace root with the project venv:

    .venv/bin/python tools/reference/drag_tables.py

Branch conventions shared with the engine (they only matter exactly on a
branch boundary, and Re = 0.01, 1, 10, 100, 1000 and 1e4 of the table are such
boundaries for some laws):

* Clift, Grace & Weber Table 5.2: every branch includes its upper end
  (Re = 0.01 uses branch A, Re = 20 branch B, ...).
* Schiller & Naumann: the formula up to and including Re = 1000, 0.44 above.
* Morsi & Alexander: every range includes its lower end (Re = 1 uses the
  1-10 coefficients), which reproduces their Table 1 values 0.458 at Re = 1000
  and 0.407 at Re = 1e4.
"""

import datetime
import math
import os
import sys

import iapws
import numpy as np
import scipy
from scipy.optimize import brentq

G = 9.80665  # standard gravity, m/s^2 (CGPM 1901)
RHO_QUARTZ = 2650.0  # kg/m^3
T_KELVIN = 293.15  # 20 degC
P_MPA = 0.101325

# 3.5e5, 5e5 and 2e6 reach the Clift et al. branches H, I and J (drag crisis
# and beyond); the other laws are evaluated there outside their fitted range.
RE_GRID = [0.01, 0.1, 0.3, 1, 3, 10, 30, 100, 300, 1000, 3000, 1e4, 3e4, 1e5, 3.5e5, 5e5, 2e6]
D_GRID = [10e-6, 20e-6, 50e-6, 100e-6, 200e-6, 500e-6, 1e-3, 2e-3, 5e-3, 10e-3]

# brentq: the smallest relative tolerance scipy accepts is 4 * machine epsilon.
RTOL = 4.0 * np.finfo(float).eps


# --------------------------------------------------------------------------
# Drag coefficient correlations, each C_D as a function of Re > 0.
# --------------------------------------------------------------------------


def cd_stokes(re):
    return 24.0 / re


def cd_schiller_naumann(re):
    # Schiller & Naumann (1933); Newton value 0.44 above Re = 1000.
    if re > 1000.0:
        return 0.44
    return 24.0 / re * (1.0 + 0.15 * re**0.687)


def cd_clift_grace_weber(re):
    # Clift, Grace & Weber (1978), Table 5.2, with w = log10(Re).
    w = math.log10(re)
    if re <= 0.01:
        return 3.0 / 16.0 + 24.0 / re
    if re <= 20.0:
        return 24.0 / re * (1.0 + 0.1315 * re ** (0.82 - 0.05 * w))
    if re <= 260.0:
        return 24.0 / re * (1.0 + 0.1935 * re**0.6305)
    if re <= 1500.0:
        return 10.0 ** np.polyval([0.1558, -1.1242, 1.6435], w)
    if re <= 1.2e4:
        return 10.0 ** np.polyval([0.1049, -0.9295, 2.5558, -2.4571], w)
    if re <= 4.4e4:
        return 10.0 ** np.polyval([-0.0636, 0.6370, -1.9181], w)
    if re <= 3.38e5:
        return 10.0 ** np.polyval([-0.1546, 1.5809, -4.3390], w)
    if re <= 4e5:
        return 29.78 - 5.3 * w
    if re <= 1e6:
        return 0.1 * w - 0.49
    return 0.19 - 8e4 / re


def cd_brown_lawler(re):
    # Brown & Lawler (2003), J. Environ. Eng. 129(3), eq. 19.
    return 24.0 / re * (1.0 + 0.150 * re**0.681) + 0.407 / (1.0 + 8710.0 / re)


def haider_levenspiel_coefficients(psi):
    # Haider & Levenspiel (1989), Powder Technol. 58, general form in sphericity.
    a = math.exp(2.3288 - 6.4581 * psi + 2.4486 * psi**2)
    b = 0.0964 + 0.5565 * psi
    c = math.exp(4.905 - 13.8944 * psi + 18.4222 * psi**2 - 10.2599 * psi**3)
    d = math.exp(1.4681 + 12.2584 * psi - 20.7322 * psi**2 + 15.8855 * psi**3)
    return a, b, c, d


def cd_haider_levenspiel(re, psi):
    a, b, c, d = haider_levenspiel_coefficients(psi)
    return 24.0 / re * (1.0 + a * re**b) + c / (1.0 + d / re)


def cd_haider_levenspiel_sphere_fit(re):
    # Haider & Levenspiel (1989), their separate fit for spheres.
    return 24.0 / re * (1.0 + 0.1806 * re**0.6459) + 0.4251 / (1.0 + 6880.95 / re)


MORSI_ALEXANDER = [
    # (lower Re of the range, a1, a2, a3); C_D = a1/Re + a2/Re^2 + a3
    (0.1, 22.73, 0.0903, 3.69),
    (1.0, 29.1667, -3.8889, 1.222),
    (10.0, 46.5, -116.67, 0.6167),
    (100.0, 98.33, -2778.0, 0.3644),
    (1000.0, 148.62, -4.75e4, 0.3570),
    (5000.0, -490.546, 57.87e4, 0.46),
    (1e4, -1662.5, 5.4167e6, 0.5191),
]


def cd_morsi_alexander(re):
    # Morsi & Alexander (1972), J. Fluid Mech. 55; 24/Re below Re = 0.1.
    if re < 0.1:
        return 24.0 / re
    for lower, a1, a2, a3 in reversed(MORSI_ALEXANDER):
        if re >= lower:
            return a1 / re + a2 / re**2 + a3
    raise AssertionError("unreachable")


def cd_ferguson_church(re, c1, c2):
    # Ferguson & Church (2004): w = R g D^2 / (C1 nu + sqrt(0.75 C2 R g D^3)),
    # i.e. Re (C1 + sqrt(0.75 C2 Ar)) = Ar. Solve that for Ar numerically
    # (the engine uses a closed form), then C_D = 4 Ar / (3 Re^2).
    def residual(ar):
        return ar - re * (c1 + math.sqrt(0.75 * c2 * ar))

    lo = re * c1  # residual(lo) < 0
    hi = 2.0 * (re * c1 + 0.75 * c2 * re * re)  # residual(hi) > 0
    ar = brentq(residual, lo, hi, xtol=1e-300, rtol=RTOL, maxiter=500)
    return 4.0 * ar / (3.0 * re * re)


def cd_two_term(re, a=24.0, b=0.44):
    return a / re + b


# Column name (without unit) -> C_D(Re).
LAWS = {
    "stokes": cd_stokes,
    "schiller_naumann": cd_schiller_naumann,
    "clift_grace_weber": cd_clift_grace_weber,
    "brown_lawler": cd_brown_lawler,
    "haider_levenspiel_psi1": lambda re: cd_haider_levenspiel(re, 1.0),
    "haider_levenspiel_psi0p8": lambda re: cd_haider_levenspiel(re, 0.8),
    "ferguson_church_18_0p4": lambda re: cd_ferguson_church(re, 18.0, 0.4),
    "ferguson_church_18_1p0": lambda re: cd_ferguson_church(re, 18.0, 1.0),
    "two_term_24_0p44": cd_two_term,
}

# Extra check columns for the drag table only (not engine drag-law variants).
EXTRA_CD = {
    "haider_levenspiel_sphere_fit": cd_haider_levenspiel_sphere_fit,
    "morsi_alexander": cd_morsi_alexander,
}


# --------------------------------------------------------------------------
# Terminal velocity by the force balance in v.
# --------------------------------------------------------------------------


def terminal_velocity(cd, d, rho_p, rho_f, mu):
    """Root of C_D(Re(v)) 1/2 rho_f v^2 pi d^2/4 = (rho_p - rho_f) g pi d^3/6."""
    weight = (rho_p - rho_f) * G * math.pi * d**3 / 6.0
    v_stokes = (rho_p - rho_f) * G * d * d / (18.0 * mu)

    def residual(v):
        re = rho_f * v * d / mu
        return cd(re) * 0.5 * rho_f * v * v * math.pi * d * d / 4.0 - weight

    # Every law has C_D >= 24/Re, so drag(v_stokes) >= weight; far below it
    # the drag is ~ Stokes drag, i.e. ~ 1e-12 * weight. The upper end is
    # widened by 1e-9 so that rounding cannot hide the sign change for the
    # Stokes law itself, whose root is v_stokes exactly.
    lo, hi = 1e-12 * v_stokes, v_stokes * (1.0 + 1e-9)
    assert residual(lo) < 0.0 <= residual(hi), (d, residual(lo), residual(hi))
    return brentq(residual, lo, hi, xtol=1e-300, rtol=RTOL, maxiter=500)


def ferguson_church_explicit(c1, c2, d, rho_p, rho_f, mu):
    # J. Sediment. Res. 74(6), 933-937 (2004), their eq. 4.
    r = (rho_p - rho_f) / rho_f
    nu = mu / rho_f
    return r * G * d * d / (c1 * nu + math.sqrt(0.75 * c2 * r * G * d**3))


def two_term_closed_form(c_inf, d, rho_p, rho_f, mu):
    # physics.md section 1.4, cancellation-free root of W = k1 v + k2 v^2.
    r = (rho_p - rho_f) / rho_f
    nu = mu / rho_f
    return r * G * d * d / (9.0 * nu + math.sqrt(81.0 * nu * nu + 0.75 * c_inf * r * G * d**3))


# --------------------------------------------------------------------------
# Output.
# --------------------------------------------------------------------------


def fmt(x):
    return repr(float(x))


def provenance(script, method_lines):
    today = datetime.date.today().isoformat()
    lines = [
        f"# generated by {script} on {today}",
        f"# python {sys.version.split()[0]}, numpy {np.__version__}, scipy {scipy.__version__}, "
        f"iapws {iapws.__version__}",
    ]
    return lines + [f"# {m}" for m in method_lines]


def write_csv(path, head, columns, rows):
    with open(path, "w", encoding="utf-8") as fh:
        for line in head:
            fh.write(line + "\n")
        fh.write(",".join(columns) + "\n")
        for row in rows:
            fh.write(",".join(fmt(x) for x in row) + "\n")


def main():
    root = os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__))))
    script = "tools/reference/drag_tables.py"
    data = os.path.join(root, "tests", "data")
    os.makedirs(data, exist_ok=True)

    # ---- drag coefficient table ----
    cd_laws = dict(LAWS)
    cd_laws.update(EXTRA_CD)
    cols = ["re [-]"] + [f"cd_{name} [-]" for name in cd_laws]
    rows = [[re] + [f(re) for f in cd_laws.values()] for re in RE_GRID]
    head = provenance(
        script,
        [
            "method: each correlation evaluated directly in double precision (Re = 3.5e5, 5e5, 2e6 reach "
            "Clift et al. branches H-J; other laws are extrapolated there); Ferguson-Church C_D by "
            "brentq on Re (C1 + sqrt(0.75 C2 Ar)) = Ar for Ar, then C_D = 4 Ar / (3 Re^2)",
            "laws: Stokes 24/Re; Schiller-Naumann 1933 (0.44 above Re = 1000); Clift, Grace & Weber 1978 "
            "Table 5.2 (branches include their upper end); Brown & Lawler 2003 eq. 19; Haider & Levenspiel "
            "1989 general sphericity form (psi = 1, 0.8) and sphere fit; Ferguson & Church 2004 (C1, C2) = "
            "(18, 0.4), (18, 1.0); two-term 24/Re + 0.44; Morsi & Alexander 1972 (ranges include their "
            "lower end, 24/Re below 0.1)",
        ],
    )
    write_csv(os.path.join(data, "drag_coefficients.csv"), head, cols, rows)

    # ---- terminal velocity of quartz spheres in water at 20 degC ----
    water = iapws.IAPWS95(T=T_KELVIN, P=P_MPA)
    rho_f = float(water.rho)
    mu = float(water.mu)
    cols = ["d [m]", "rho_p [kg/m^3]", "rho_f [kg/m^3]", "mu [Pa s]", "g [m/s^2]", "v_stokes_closed_form [m/s]"]
    for name in LAWS:
        cols += [f"v_{name} [m/s]", f"re_{name} [-]"]
    cols += [
        "v_ferguson_church_18_0p4_explicit [m/s]",
        "v_ferguson_church_18_1p0_explicit [m/s]",
        "v_two_term_24_0p44_closed_form [m/s]",
    ]
    rows = []
    for d in D_GRID:
        row = [d, RHO_QUARTZ, rho_f, mu, G, (RHO_QUARTZ - rho_f) * G * d * d / (18.0 * mu)]
        for f in LAWS.values():
            v = terminal_velocity(f, d, RHO_QUARTZ, rho_f, mu)
            row += [v, rho_f * v * d / mu]
        fc04 = ferguson_church_explicit(18.0, 0.4, d, RHO_QUARTZ, rho_f, mu)
        fc10 = ferguson_church_explicit(18.0, 1.0, d, RHO_QUARTZ, rho_f, mu)
        tt = two_term_closed_form(0.44, d, RHO_QUARTZ, rho_f, mu)
        # The root searches must reproduce the closed forms (self-check).
        by_name = dict(zip(cols, row))
        for name, exact in [
            ("ferguson_church_18_0p4", fc04),
            ("ferguson_church_18_1p0", fc10),
            ("two_term_24_0p44", tt),
            ("stokes", row[5]),
        ]:
            v = by_name[f"v_{name} [m/s]"]
            assert abs(v / exact - 1.0) < 1e-13, (name, d, v, exact)
        row += [fc04, fc10, tt]
        rows.append(row)
    head = provenance(
        script,
        [
            f"fluid: water at T = {T_KELVIN} K, P = {P_MPA} MPa from iapws.IAPWS95: rho_f = {fmt(rho_f)} kg/m^3 "
            f"(IAPWS-95), mu = {fmt(mu)} Pa s (IAPWS 2008 viscosity); g = {G} m/s^2; quartz rho_p = "
            f"{RHO_QUARTZ} kg/m^3",
            "method: v solves C_D(rho_f v d/mu) * rho_f v^2/2 * pi d^2/4 = (rho_p - rho_f) g pi d^3/6 by "
            "scipy.optimize.brentq on v in [1e-12 v_stokes, (1 + 1e-9) v_stokes], rtol = 4 eps; re = rho_f v d / mu; "
            "laws and branch conventions as in drag_coefficients.csv",
            "explicit columns: Ferguson & Church 2004 w = R g d^2 / (C1 nu + sqrt(0.75 C2 R g d^3)); two-term "
            "closed form v = R g d^2 / (9 nu + sqrt(81 nu^2 + 0.75 C_inf R g d^3)) (physics.md 1.4)",
        ],
    )
    write_csv(os.path.join(data, "terminal_velocity_quartz_20C.csv"), head, cols, rows)


if __name__ == "__main__":
    main()
