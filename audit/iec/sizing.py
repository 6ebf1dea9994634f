"""Required flow coefficient of control valves, IEC 60534-2-1 (2011), vectorised.

Every public function takes numpy arrays in SI units, one element per
valve-case, and works on all of them at once.  The standard tabulates its
numerical constants N1..N32 for Kv with flows in m3/h or kg/h, pressures in
kPa and diameters in mm; ``_to_standard_units`` converts once on the way in,
and results come back as Kv (m3/h at 1 bar) and Cv (US gpm at 1 psi).

Models held here (clause numbers of IEC 60534-2-1:2011):
- incompressible turbulent flow, non-choked and choked (clause 6), with
  the liquid critical pressure ratio factor FF;
- compressible turbulent flow, non-choked and choked (clause 7), with the
  expansion factor Y and the specific heat ratio factor F_gamma;
- piping geometry: FP, FLP and xTP for reducers and expanders (clause 8),
  from the Bernoulli and resistance coefficients of concentric reducers;
- non-turbulent flow: valve Reynolds number Rev and the factor FR
  (clause 9 and annex A), full-size and reduced trims.

Validity: Newtonian single-phase fluids at the inlet; the standard does not
cover multiphase inlets, slurries or non-Newtonian liquids.  Non-turbulent
gas uses the standard's non-turbulent gas equation; the effect of reducers
in non-turbulent flow is not defined by the standard and is not applied
there.
"""
from __future__ import annotations

import numpy as np

from .blocks import in_blocks

# Numerical constants for Kv, IEC 60534-2-1 Table 1 (flows m3/h or kg/h, kPa, mm, K).
N1 = 1.0e-1
N2 = 1.6e-3
N4 = 7.07e-2
N5 = 1.8e-3
N6 = 3.16
N18 = 8.65e-1
N27 = 7.75e-1
N32 = 1.4e2
RHO_WATER_15C = 999.1  # kg/m3, the reference density rho0 of the standard
R_GAS = 8.314462618     # J/(mol K)
KV_TO_CV = 1.156        # Cv = 1.156 Kv (IEC 60534-1 / common conversion)
GAMMA_AIR = 1.40

_GRID_RATIO = 1.5       # geometric search grid for the smallest sufficient C
_GRID_POINTS = 44       # covers 1.5**44, about 6e7 times the first estimate
_BISECTIONS = 40
CONVERGENCE_TOLERANCE = 1e-3  # 0.1 % on C


def piping_coefficients(d, d1, d2):
    """Loss and Bernoulli coefficients of concentric reducers, IEC 60534-2-1 clause 8.

    d: valve inlet diameter [m]; d1, d2: upstream and downstream pipe inside
    diameters [m].  Returns (sum_zeta, zeta_inlet): the total effective
    coefficient zeta1 + zeta2 + zetaB1 - zetaB2 and the inlet one
    zeta1 + zetaB1.  Both are zero when the pipes equal the valve size.
    Valid for concentric reducers and expanders of pipe not smaller than the
    valve.
    """
    b1 = (d / d1) ** 2
    b2 = (d / d2) ** 2
    zeta1 = 0.5 * (1.0 - b1) ** 2
    zeta2 = 1.0 * (1.0 - b2) ** 2
    zeta_b1 = 1.0 - b1 ** 2
    zeta_b2 = 1.0 - b2 ** 2
    return zeta1 + zeta2 + zeta_b1 - zeta_b2, np.maximum(zeta1 + zeta_b1, 0.0)


def piping_factors(c_kv, d_mm, sum_zeta, zeta_inlet, fl, xt):
    """FP, FLP and xTP at flow coefficient ``c_kv`` [Kv], IEC 60534-2-1 eqs for clause 8.

    d_mm: valve size [mm].  Returns (fp, flp, xtp), dimensionless.
    """
    c_d2 = (c_kv / d_mm ** 2) ** 2
    with np.errstate(invalid="ignore", divide="ignore"):
        # An expander alone makes sum_zeta negative; for large C/d^2 the root turns
        # imaginary, the formula's limit: NaN here, and no such C counts as sufficient.
        fp = 1.0 / np.sqrt(1.0 + sum_zeta / N2 * c_d2)
        flp = fl / np.sqrt(1.0 + fl ** 2 / N2 * zeta_inlet * c_d2)
        xtp = (xt / fp ** 2) / (1.0 + xt * zeta_inlet / N5 * c_d2)
    return fp, flp, xtp


def reynolds_number(c_kv, q_m3h, nu, d1_mm, fl, fd):
    """Valve Reynolds number Rev, IEC 60534-2-1 eq. (28).

    c_kv: flow coefficient [Kv]; q_m3h: actual volumetric flow at the inlet
    [m3/h]; nu: kinematic viscosity [m2/s]; d1_mm: upstream pipe inside
    diameter [mm]; fl, fd: trim factors.  Dimensionless.
    """
    return (N4 * fd * q_m3h / (nu * np.sqrt(c_kv * fl))
            * (fl ** 2 * c_kv ** 2 / (N2 * d1_mm ** 4) + 1.0) ** 0.25)


def reynolds_factor(c_kv, d_mm, rev, fl):
    """Reynolds number factor FR, IEC 60534-2-1 annex A (non-turbulent flow).

    Full-size trims (C/d^2 >= 0.016 N18) use n1 = N2/(C/d^2)^2 with C/d^2
    capped at 0.04; reduced trims use n2 = 1 + N32 (C/d^2)^(2/3).  FR is the
    lesser of the transitional and the laminar expression (laminar only
    below Rev = 10), never above 1, and exactly 1 from Rev = 10,000 up.
    """
    ratio = c_kv / d_mm ** 2
    full_trim = ratio >= 0.016 * N18
    n = np.where(full_trim, N2 / np.minimum(ratio, 0.04) ** 2, 1.0 + N32 * ratio ** (2.0 / 3.0))
    with np.errstate(divide="ignore", invalid="ignore"):
        transitional = 1.0 + 0.33 * np.sqrt(fl) / n ** 0.25 * np.log10(rev / 1.0e4)
        laminar = 0.026 / fl * np.sqrt(n * rev)
    fr = np.where(rev < 10.0, laminar, np.minimum(transitional, laminar))
    return np.where(rev >= 1.0e4, 1.0, np.clip(fr, 0.0, 1.0))


def liquid_ff(pv, pc):
    """Liquid critical pressure ratio factor FF = 0.96 - 0.28 sqrt(pv/pc), IEC 60534-2-1 eq. (4).

    pv: vapour pressure at inlet temperature; pc: critical pressure (same units).
    """
    return 0.96 - 0.28 * np.sqrt(np.clip(pv / pc, 0.0, 1.0))


def expansion_factor(x, f_gamma, xt, x_choked):
    """Expansion factor Y, IEC 60534-2-1 eq. (12); 2/3 once the flow is choked.

    x: pressure differential ratio; f_gamma: specific heat ratio factor;
    xt: xT of the valve; x_choked: the choked limit F_gamma xTP.
    Below the choked limit Y = 1 - x / (3 F_gamma xT): with attached
    fittings Y keeps xT while the choked limit uses xTP, as the standard's
    worked example with reducers does (Y = 0.674 there).  From the choked
    limit on Y = 2/3, as in the standard's choked-flow equations.
    """
    return np.where(x >= x_choked, 2.0 / 3.0, np.maximum(1.0 - x / (3.0 * f_gamma * xt), 2.0 / 3.0))


class _Case:
    """The valve-case arrays in the standard's units, prepared once."""

    def __init__(self, is_gas, w, p1, p2, t1, rho1, pv, pc, mu, molar_mass, k, d, d1, d2, fl, xt, fd):
        self.gas = np.asarray(is_gas, dtype=bool)
        self.w = np.asarray(w, float) * 3600.0            # kg/h
        self.p1 = np.asarray(p1, float) / 1000.0           # kPa
        self.p2 = np.asarray(p2, float) / 1000.0
        self.dp = self.p1 - self.p2
        self.t1 = np.asarray(t1, float)
        self.rho1 = np.asarray(rho1, float)
        self.q = self.w / self.rho1                         # m3/h at inlet
        self.nu = np.asarray(mu, float) / self.rho1         # m2/s
        self.m = np.asarray(molar_mass, float)
        # Rev for gas takes the flow at 0 degC and 101.325 kPa with the inlet viscosity,
        # as the standard's small-flow worked example does (Rev about 1,200 there).
        rho_normal = 101.325 * self.m / (R_GAS * 273.15)
        self.q_rev = np.where(self.gas, self.w / rho_normal, self.q)
        self.pv = np.nan_to_num(np.asarray(pv, float) / 1000.0)
        self.pc = np.nan_to_num(np.asarray(pc, float) / 1000.0, nan=1.0)
        self.f_gamma = np.asarray(k, float) / GAMMA_AIR
        self.d = np.asarray(d, float) * 1000.0              # mm
        self.d1 = np.asarray(d1, float) * 1000.0
        self.fl = np.asarray(fl, float)
        self.xt = np.nan_to_num(np.asarray(xt, float), nan=1.0)
        self.fd = np.asarray(fd, float)
        self.sum_zeta, self.zeta_in = piping_coefficients(self.d, self.d1, np.asarray(d2, float) * 1000.0)
        self.ff = liquid_ff(self.pv, self.pc)
        self.x = self.dp / self.p1
        self.rho_rel = self.rho1 / RHO_WATER_15C

    def subset(self, mask: np.ndarray) -> "_Case":
        """The same prepared arrays for the cases where ``mask`` holds (a scalar input stands for every case)."""
        part = object.__new__(_Case)
        for name, value in vars(self).items():
            setattr(part, name, np.broadcast_to(value, mask.shape)[mask])
        return part


def _evaluate(case: _Case, c):
    """Everything the standard computes at trial coefficient ``c`` [Kv]."""
    fp, flp, xtp = piping_factors(c, case.d, case.sum_zeta, case.zeta_in, case.fl, case.xt)
    rev = reynolds_number(c, case.q_rev, case.nu, case.d1, case.fl, case.fd)
    fr = reynolds_factor(c, case.d, rev, case.fl)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        # liquid, clause 6 and 8: the choked formula equals the non-choked one at dp_choked
        dp_choked_l = (flp / fp) ** 2 * (case.p1 - case.ff * case.pv)
        dp_eff = np.minimum(case.dp, dp_choked_l)
        c_liq = case.q / (N1 * fp) * np.sqrt(case.rho_rel / dp_eff)
        c_liq_lam = case.q / (N1 * fr) * np.sqrt(case.rho_rel / case.dp)
        # gas, clause 7 and 8
        x_choked = case.f_gamma * xtp
        x_eff = np.minimum(case.x, x_choked)
        y = expansion_factor(case.x, case.f_gamma, case.xt, x_choked)
        c_gas = case.w / (N6 * fp * y * np.sqrt(x_eff * case.p1 * case.rho1))
        c_gas_lam = case.w / (N27 * fr) * np.sqrt(case.t1 / (case.dp * (case.p1 + case.p2) * case.m))
    turbulent = np.where(case.gas, c_gas, c_liq)
    laminar = np.where(case.gas, c_gas_lam, c_liq_lam)
    required = np.where(fr < 1.0, np.fmax(turbulent, laminar), turbulent)
    return {
        "c_req": required, "fp": fp, "flp": flp, "xtp": xtp, "rev": rev, "fr": fr,
        "dp_choked": np.where(case.gas, x_choked * case.p1, dp_choked_l),
        "x_choked": x_choked, "y": y,
    }


def _smallest_sufficient_c(case: _Case):
    """Smallest C with C >= C_required(C), for every case at once.

    FP, FLP, xTP and FR depend on C itself.  Plain fixed-point iteration
    diverges in laminar flow (C*FR(C) falls as C grows for full-size trims)
    and crawls with large reducers, so the root is first bracketed on a
    geometric grid, which tells cleanly which cases no C can meet, and then
    narrowed to a bracket [lo, hi] at most ``_TIGHT`` wide in log C (hi
    sufficient, lo not).

    Where the crossing is provably the only one in the grid's bracket, secant
    steps find it in a few evaluations (``_narrow``): turbulent flow all
    through the bracket (Rev >= 10,000 at its top; Rev falls as C grows) and,
    for a gas, the same choked state at both ends (x_choked = F_gamma xTP is
    monotonic in C, so the state switches at most once).  There C_required/C
    falls as C grows (clauses 6 to 8: 1/(C FP) and 1/(C FLP) fall), so
    C_required(C) - C changes sign once.  Elsewhere (non-turbulent flow, or a
    gas whose choked state switches inside the bracket, where Y jumps and
    C_required may cross C more than once) the bracket is bisected, which
    finds the crossing the plain method always found.
    """
    n = case.w.size
    start = _evaluate(case, np.full(n, 1e-12))["c_req"]  # no piping, turbulent
    start = np.where(np.isfinite(start) & (start > 0), start, np.nan) * 0.25
    hi, lo = np.full(n, np.nan), np.full(n, np.nan)
    excess_hi, excess_lo = np.full(n, np.nan), np.full(n, np.nan)
    turbulent_hi, choked_hi, choked_lo = np.zeros(n, bool), np.zeros(n, bool), np.zeros(n, bool)
    trial = start.copy()
    # The point below the grid's first is not evaluated: its NaN excess keeps such a case out of ``single``.
    previous, excess_previous, choked_previous = start / _GRID_RATIO, np.full(n, np.nan), np.zeros(n, bool)
    for _ in range(_GRID_POINTS):
        ok, excess, turbulent, choked = _sufficient(case, trial)
        new = ok & np.isnan(hi)
        hi[new], lo[new] = trial[new], previous[new]
        excess_hi[new], excess_lo[new] = excess[new], excess_previous[new]
        turbulent_hi[new], choked_hi[new] = turbulent[new], choked[new]
        choked_lo[new] = choked_previous[new]
        if not np.isnan(hi[np.isfinite(start)]).any():
            break
        previous, excess_previous, choked_previous, trial = trial, excess, choked, trial * _GRID_RATIO
    found = np.isfinite(hi)
    with np.errstate(divide="ignore", invalid="ignore"):
        x_lo, x_hi = np.log(lo), np.log(hi)
    single = found & np.isfinite(excess_lo) & turbulent_hi & (~case.gas | (choked_hi == choked_lo))
    if single.any():
        x_lo[single], x_hi[single] = _narrow(case.subset(single), x_lo[single], x_hi[single], excess_lo[single],
                                             excess_hi[single])
    open_ = found & (x_hi - x_lo > _TIGHT)
    if open_.any():
        x_lo[open_], x_hi[open_] = _bisect(case.subset(open_), x_lo[open_], x_hi[open_])
    return np.exp(x_hi), np.exp(x_lo), found


_SECANT_STEPS = 12      # secant steps before a case still open is bisected
_TIGHT = 4e-13          # final bracket width in log C (40 bisections of a 1.5 ratio: 3.7e-13)


def _sufficient(case: _Case, c):
    """Per case at trial ``c``: C_required <= c, log(C_required / c), turbulent (Rev >= 10,000), choked (gas)."""
    at = _evaluate(case, c)
    with np.errstate(divide="ignore", invalid="ignore"):
        return at["c_req"] <= c, np.log(at["c_req"] / c), at["rev"] >= 1.0e4, case.x >= at["x_choked"]


def _narrow(case: _Case, x_lo, x_hi, f_lo, f_hi):
    """Narrow each bracket [x_lo, x_hi] of log C (f = log(C_required/C): > 0 at x_lo, <= 0 at x_hi).

    A secant step through the last two points evaluated where it falls inside the bracket, else
    regula falsi between the ends (Illinois: the end that stays has its f halved), else the
    midpoint; a point within half the final width of an end is moved out to that distance, so
    once the root is found the bracket closes on it.  Cases still open when fewer than half remain
    are carried on by themselves.
    """
    out_lo, out_hi, at = x_lo.copy(), x_hi.copy(), np.arange(x_lo.size)
    x_lo, x_hi, f_lo, f_hi = x_lo.copy(), x_hi.copy(), f_lo.copy(), f_hi.copy()
    x_a, f_a, x_b, f_b = x_hi.copy(), f_hi.copy(), x_lo.copy(), f_lo.copy()  # the last two points
    side = np.zeros(x_lo.size, dtype=np.int8)  # which end the last step replaced: -1 lo, +1 hi
    for _ in range(_SECANT_STEPS):
        open_ = x_hi - x_lo > _TIGHT
        if not open_.any():
            break
        if open_.mean() < 0.5:  # carry on with the open cases only
            out_lo[at], out_hi[at] = x_lo, x_hi
            case, at = case.subset(open_), at[open_]
            x_lo, x_hi, f_lo, f_hi, x_a, f_a, x_b, f_b, side, open_ = (
                v[open_] for v in (x_lo, x_hi, f_lo, f_hi, x_a, f_a, x_b, f_b, side, open_))
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            secant = x_a - f_a * (x_a - x_b) / (f_a - f_b)
            falsi = x_hi - f_hi * (x_hi - x_lo) / (f_hi - f_lo)
        inside = lambda x: np.isfinite(x) & (x >= x_lo) & (x <= x_hi)  # noqa: E731
        x = np.where(inside(secant), secant, np.where(inside(falsi), falsi, 0.5 * (x_lo + x_hi)))
        # A point within half the final width of an end moves to that distance: the bracket then closes.
        x = np.clip(x, x_lo + 0.5 * _TIGHT, x_hi - 0.5 * _TIGHT)
        x = np.where(open_, x, x_hi)
        ok, f, _, _ = _sufficient(case, np.exp(x))
        to_hi, to_lo = open_ & ok, open_ & ~ok
        f_lo = np.where(to_hi & (side == 1), 0.5 * f_lo, f_lo)
        f_hi = np.where(to_lo & (side == -1), 0.5 * f_hi, f_hi)
        x_hi, f_hi = np.where(to_hi, x, x_hi), np.where(to_hi, f, f_hi)
        x_lo, f_lo = np.where(to_lo, x, x_lo), np.where(to_lo, f, f_lo)
        side = np.where(to_hi, 1, np.where(to_lo, -1, side)).astype(np.int8)
        x_b, f_b = np.where(open_, x_a, x_b), np.where(open_, f_a, f_b)
        x_a, f_a = np.where(open_, x, x_a), np.where(open_, f, f_a)
    out_lo[at], out_hi[at] = x_lo, x_hi
    return out_lo, out_hi


def _bisect(case: _Case, x_lo, x_hi):
    """Bisect [x_lo, x_hi] (log C) until at most ``_TIGHT`` wide; hi stays sufficient."""
    for _ in range(_BISECTIONS + 20):  # 40 close the grid's 1.5 ratio to _TIGHT; the rest is a margin
        wide = x_hi - x_lo > _TIGHT
        if not wide.any():
            break
        mid = 0.5 * (x_lo + x_hi)
        ok = _sufficient(case, np.exp(mid))[0]
        x_hi = np.where(wide & ok, mid, x_hi)
        x_lo = np.where(wide & ~ok, mid, x_lo)
    return x_lo, x_hi


def size_valves(is_gas, w, p1, p2, t1, rho1, pv, pc, mu, molar_mass, k, d, d1, d2, fl, xt, fd):
    """Required Kv/Cv and trim factors for every valve-case, IEC 60534-2-1:2011.

    Parameters (arrays, one element per valve-case, SI units):
    is_gas: True for compressible flow; w: mass flow [kg/s]; p1, p2: inlet
    and outlet pressure [Pa abs]; t1: inlet temperature [K]; rho1: inlet
    density [kg/m3]; pv: vapour pressure at t1 [Pa] (liquid; NaN for gas);
    pc: critical pressure [Pa] (liquid); mu: dynamic viscosity [Pa s];
    molar_mass [kg/kmol] (gas); k: ratio of specific heats (gas); d: valve
    size [m]; d1, d2: upstream and downstream pipe inside diameters [m];
    fl, xt, fd: trim factors at rated travel (xt may be NaN for liquids).

    Returns a dict of arrays: kv, cv, fp, flp, xtp, fr, rev, ff, y, x,
    x_choked (gas), dp_choked [Pa], choked, converged, residual.  Cases no
    coefficient can meet (for example a laminar flow too large for the body,
    or reducers that alone choke it) come back with NaN and converged False.
    Validity: p2 < p1, single-phase inlet, positive flow.
    """
    return in_blocks(_size_block, is_gas, w, p1, p2, t1, rho1, pv, pc, mu, molar_mass, k, d, d1, d2, fl, xt, fd)


def _size_block(is_gas, w, p1, p2, t1, rho1, pv, pc, mu, molar_mass, k, d, d1, d2, fl, xt, fd):
    case = _Case(is_gas, w, p1, p2, t1, rho1, pv, pc, mu, molar_mass, k, d, d1, d2, fl, xt, fd)
    c, c_below, found = _smallest_sufficient_c(case)
    at = _evaluate(case, np.where(found, c, 1.0))
    with np.errstate(invalid="ignore", divide="ignore"):
        residual = np.abs(at["c_req"] / c - 1.0)
    # Converged: C suffices and the largest insufficient C found lies within the tolerance below it.
    # (Where a regime switch, say onset of choking with fittings, makes C_required jump, the
    # smallest sufficient C sits at the jump and the residual there is not small.)
    converged = found & (at["c_req"] <= c * (1 + 1e-9)) & (c / c_below - 1.0 < CONVERGENCE_TOLERANCE)
    kv = np.where(converged, c, np.nan)
    dp_choked = at["dp_choked"] * 1000.0
    x_choked = np.where(case.gas, at["x_choked"], np.nan)
    choke_ratio = np.where(case.gas, case.x / at["x_choked"], case.dp / at["dp_choked"])
    nan_if_not = lambda a: np.where(converged, a, np.nan)  # noqa: E731
    return {
        "kv": kv,
        "cv": kv * KV_TO_CV,
        "fp": nan_if_not(at["fp"]),
        "flp": nan_if_not(at["flp"]),
        "xtp": np.where(case.gas, nan_if_not(at["xtp"]), np.nan),
        "fr": nan_if_not(at["fr"]),
        "rev": nan_if_not(at["rev"]),
        "ff": np.where(case.gas, np.nan, case.ff),
        "y": np.where(case.gas, nan_if_not(at["y"]), np.nan),
        "x": np.where(case.gas, case.x, np.nan),
        "x_choked": nan_if_not(x_choked),
        "dp_choked": nan_if_not(dp_choked),
        "choke_ratio": nan_if_not(choke_ratio),
        "choked": converged & (choke_ratio >= 1.0),
        "converged": converged,
        "residual": residual,
    }


def flow_through(c_kv, is_gas, p1, p2, t1, rho1, pv, pc, molar_mass, k, d, d1, d2, fl, xt):
    """Mass flow [kg/s] a valve of coefficient ``c_kv`` [Kv] passes, turbulent flow.

    The forward form of IEC 60534-2-1 clauses 6 to 8 (same arguments and
    units as ``size_valves``; pv, pc for liquids, molar_mass and k for
    gases).  With C known, FP, FLP and xTP follow directly.  The flow rises
    with the square root of the pressure drop and stays flat past
    dp_choked (liquid) or x_choked (gas).  Reynolds effects are not applied:
    use for turbulent service, as the plots and capacity ceilings do.
    """
    one = np.ones_like(np.asarray(p2, float))
    case = _Case(is_gas * one, one, p1 * one, p2, t1 * one, rho1 * one, pv * one, pc * one, one,
                 molar_mass * one, k * one, d * one, d1 * one, d2 * one, fl * one, xt * one, one)
    c = np.asarray(c_kv, float) * one
    fp, flp, xtp = piping_factors(c, case.d, case.sum_zeta, case.zeta_in, case.fl, case.xt)
    dp_choked = (flp / fp) ** 2 * (case.p1 - case.ff * case.pv)
    q = N1 * fp * c * np.sqrt(np.minimum(case.dp, dp_choked) / case.rho_rel)
    w_liq = q * case.rho1 / 3600.0
    x_choked = case.f_gamma * xtp
    x_eff = np.minimum(case.x, x_choked)
    y = expansion_factor(case.x, case.f_gamma, case.xt, x_choked)
    w_gas = N6 * fp * c * y * np.sqrt(x_eff * case.p1 * case.rho1) / 3600.0
    return np.where(case.gas, w_gas, w_liq)
