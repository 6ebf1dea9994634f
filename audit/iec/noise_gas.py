"""Aerodynamic noise of gas and vapour flow through a control valve, IEC 60534-8-3:2010.

A-weighted sound pressure level 1 m from the downstream pipe wall, for
standard (single-stage) trims, all five flow regimes, with the pipe wall's
transmission loss band by band and, where the valve outlet runs faster
than Mach 0.3 into a larger pipe, the noise of the outlet flow itself
(clause 7).  All inputs SI, one value per case; vectorised over cases and
the 33 third-octave bands.

Perfect-gas relations as the standard uses them; the inlet state enters as
p1/rho1 (= Z R T1 / M), so a real-gas density from the line list or
CoolProp carries through.  Validity as applied here: single-phase dry gas
at the outlet, steel pipe.  At a valve outlet Mach number of 1 or more the
outlet is choked and the expansion finishes in the pipe; the level is still
given (clause 7 caps the velocities it uses) and the note says the case is at
the method's edge.

The equations, per case (FL = FLP/FP where there are fittings, g = k):

    regimes by p2 against p2C = p1 - FL^2 (p1 - pvcc), pvcc = p1 (2/(g+1))^(g/(g-1)),
        p2B = (p1/alpha)(1/g)^(g/(g-1)), p2CE = p1/(22 alpha), alpha = pvcc/p2C
    I    Uvc from the isentropic expansion to pvc = p1 - (p1 - p2)/FL^2,
         eta = 10^An FL^2 Mvc^3, Wa = eta m Uvc^2/2, fp = Stp Uvc / Dj
    II   eta = 10^An Mj^(6.6 FL^2), Wa = eta (m cvcc^2/2)(p1 - p2)/(p1 - pvcc), fp = Stp Mj cvcc / Dj
    III  as II without the pressure ratio
    IV   eta = 10^An (Mj^2/2) sqrt(2)^(6.6 FL^2), fp = 0.35 cvcc / (1.25 Dj sqrt(Mj^2 - 1))
    V    as IV with Mj held at its value at p2CE
    Lpi  = 10 lg(3.2e9 Wa rho2 c2 / Di^2) + 16 lg(1/(1 - min(M2, 0.3)))
    band Lpi(f) = Lpi + dL_size(d) - 8 - 10 lg(1 + (f/2fp)^2.5) - 10 lg(1 + (fp/2f)^1.7)
    TL(f) = 10 lg[8.25e-7 (c2/(ts f))^2 Gx / (((rho2 c2/415) + 1.5e-3 rhos ts sqrt(f)) / Gy + 1) (pa/ps)]
    outlet flow (Mo > 0.3): Up <= 0.8 c2, UR = Up Di^2/(beta d^2) <= c2, eta = 10^-3 MR^3,
         W = eta (m UR^2/2)((1 - d^2/Di^2)^2 + 0.2), fp = 0.2 UR / d, added in energy inside the pipe.

How the pieces were checked: the regime quantities, the internal level,
the outlet-flow chain and the final levels reproduce the standard's
Annex A examples; the pipe transmission loss reproduces the 33 bands
Annex A prints for its DN 200 pipe.  Two terms we could not read off the
standard's text here and recovered by probing the `fluids` library's
implementation as a black box: the sqrt(f) wall term of the transmission
loss and the size term dL_size(d) below 0.15 m; the Annex A values then
confirm both (tests/test_noise_gas.py says which check pins which).
"""
from __future__ import annotations

import numpy as np

from audit.iec import acoustics as ac
from audit.iec.blocks import in_blocks


AN_GLOBE = -3.8          # acoustic efficiency correction of a globe valve with cage trim
STP_GLOBE = 0.2          # peak Strouhal number of the same
AN_EXPANDER = -3.0       # the outlet flow into an expander (clause 7)
STP_EXPANDER = 0.2
BETA_CONTRACTION = 0.93  # valve outlet contraction, straight-pattern globe valves
OUTLET_MACH_SECOND_SOURCE = 0.3
PIPE_MACH_CAP = 0.3
AIR_IMPEDANCE = 415.0    # rho c of air [Pa s/m] as the transmission-loss relation writes it
TL_CONSTANT = 8.25e-7
WALL_TERM = 1.5e-3
SPECTRUM_OFFSET_DB = -8.0


def regimes(p1, p2, k, fl):
    """Flow regime 1..5 of IEC 60534-8-3 and its boundary pressures [Pa]."""
    pvcc = p1 * (2.0 / (k + 1.0)) ** (k / (k - 1.0))
    p2c = p1 - fl ** 2 * (p1 - pvcc)
    alpha = pvcc / p2c
    p2b = p1 / alpha * (1.0 / k) ** (k / (k - 1.0))
    p2ce = p1 / (22.0 * alpha)
    regime = np.select([p2 >= p2c, p2 >= pvcc, p2 >= p2b, p2 >= p2ce], [1, 2, 3, 4], 5)
    return regime, {"pvcc": pvcc, "p2c": p2c, "alpha": alpha, "p2b": p2b, "p2ce": p2ce}


def size_correction_db(d):
    """Level correction [dB] for valve outlet diameter d [m]: 0 above 0.15 m, -9 dB at 0.05 m and below."""
    cubic = 16660.0 * d ** 3 - 6370.0 * d ** 2 + 813.0 * d - 35.8
    return np.where(d > 0.15, 0.0, np.where(d <= 0.05, -9.0, cubic))


def source_power(m, p1, p2, rho1, k, kv, fl, fd, an, stp):
    """Acoustic power Wa [W], peak frequency fp [Hz] and regime of the trim noise, IEC 60534-8-3 clause 5.

    m [kg/s]; p1, p2 [Pa]; rho1 [kg/m3]; k: ratio of specific heats; kv
    [m3/h] at the operating point; fl (FLP/FP with fittings); fd; an, stp
    from the valve style.
    """
    regime, b = regimes(p1, p2, k, fl)
    e = (k - 1.0) / k
    a1 = p1 / rho1
    dj = ac.jet_diameter(kv, fd, fl)
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        pvc = p1 - (p1 - p2) / fl ** 2
        ratio_vc = np.where(regime == 1, pvc / p1, 1.0)
        uvc = np.sqrt(2.0 * k / (k - 1.0) * (1.0 - ratio_vc ** e) * a1)
        mvc = uvc / np.sqrt(k * a1 * ratio_vc ** e)
        w1 = 10.0 ** an * fl ** 2 * mvc ** 3 * m * uvc ** 2 / 2.0
        cvcc = np.sqrt(2.0 * k / (k + 1.0) * a1)
        mj = np.sqrt(2.0 / (k - 1.0) * ((p1 / (b["alpha"] * np.maximum(p2, b["p2ce"]))) ** e - 1.0))
        wms = m * cvcc ** 2 / 2.0
        growing = 10.0 ** an * mj ** (6.6 * fl ** 2)
        shocked = 10.0 ** an * mj ** 2 / 2.0 * np.sqrt(2.0) ** (6.6 * fl ** 2)
        wa = np.select([regime == 1, regime == 2, regime == 3],
                       [w1, growing * wms * (p1 - p2) / (p1 - b["pvcc"]), growing * wms], shocked * wms)
        fp = np.select([regime == 1, regime <= 3],
                       [stp * uvc / dj, stp * mj * cvcc / dj], 0.35 * cvcc / (1.25 * dj * np.sqrt(mj ** 2 - 1.0)))
    return wa, fp, regime


def peak_spectrum(f, fp):
    """Relative band level [dB] of the aerodynamic spectrum around fp, IEC 60534-8-3 (offset included)."""
    r = f / fp
    return (SPECTRUM_OFFSET_DB - 10.0 * np.log10(1.0 + (r / 2.0) ** 2.5)
            - 10.0 * np.log10(1.0 + (1.0 / (2.0 * r)) ** 1.7))


def transmission_loss(f, di, wall, rho2, c2, rho_s=ac.STEEL_DENSITY, c_s=ac.STEEL_SOUND_SPEED,
                      c_a=ac.AIR_SOUND_SPEED, p_a=ac.AIR_PRESSURE):
    """Pipe wall transmission loss [dB] per band for gas-filled steel pipe, IEC 60534-8-3:2010.

    f (1, bands) [Hz]; di, wall [m], rho2 [kg/m3], c2 [m/s] as (cases, 1).
    Ring frequency fr = cs/(pi Di), internal coincidence fo = (fr/4)(c2/ca),
    external coincidence fg = sqrt(3) ca^2 / (pi ts cs).
    """
    fr = c_s / (np.pi * di)
    fo = fr / 4.0 * (c2 / c_a)
    fg = np.sqrt(3.0) * c_a ** 2 / (np.pi * wall * c_s)
    gx = np.where(f < fo, (fo / fr) ** (2.0 / 3.0) * (f / fo) ** 4, np.where(f < fr, np.sqrt(f / fr), 1.0))
    gy = np.where(f < fo, np.where(fo < fg, fo / fg, 1.0), np.where(f < fg, f / fg, 1.0))
    wall_load = (rho2 * c2 / AIR_IMPEDANCE + WALL_TERM * rho_s * wall * np.sqrt(f)) / gy + 1.0
    return 10.0 * np.log10(TL_CONSTANT * (c2 / (wall * f)) ** 2 * gx / wall_load * (p_a / ac.AIR_PRESSURE))


def outlet_flow_power(m, d, di, rho2, c2, beta=BETA_CONTRACTION, an=AN_EXPANDER, stp=STP_EXPANDER):
    """Acoustic power [W] and peak frequency [Hz] of the flow leaving the valve outlet, IEC 60534-8-3 clause 7."""
    up = np.minimum(m / (rho2 * np.pi * di ** 2 / 4.0), 0.8 * c2)
    ur = np.minimum(up * di ** 2 / (beta * d ** 2), c2)
    mr = ur / c2
    stream = m * ur ** 2 / 2.0 * ((1.0 - d ** 2 / di ** 2) ** 2 + 0.2)
    return 10.0 ** an * mr ** 3 * stream, stp * ur / d


def gas_noise(m, p1, p2, rho1, k, kv, fl, fd, d, di, wall, rho2, c2, an=AN_GLOBE, stp=STP_GLOBE,
              rho_s=ac.STEEL_DENSITY, c_s=ac.STEEL_SOUND_SPEED, outlet_flow=True):
    """A-weighted sound pressure level [dBA] 1 m from the downstream pipe, IEC 60534-8-3:2010.

    m: mass flow [kg/s]; p1, p2 [Pa]; rho1: inlet density [kg/m3]; k: ratio
    of specific heats; kv: flow coefficient at the operating point [m3/h];
    fl: FL, or FLP/FP with fittings; fd: valve style modifier; d: valve
    outlet (nominal) diameter [m]; di, wall: downstream pipe inside diameter
    and wall [m]; rho2, c2: density [kg/m3] and speed of sound [m/s] at the
    outlet; an, stp: acoustic efficiency correction and peak Strouhal number
    of the valve style (-3.8 and 0.2: globe valve, cage trim); outlet_flow:
    add clause 7's outlet-flow noise where it applies (False: the trim alone).
    At a valve outlet Mach number of 1 or more (a choked outlet) the level is still computed: the trim
    noise of clause 5 depends on the inlet state and the pressure ratio, and clause 7 limits the
    outlet-flow velocities it uses (Up <= 0.8 c2, UR <= c2); the caller says the case is at the
    method's edge.

    Returns a dict: level_dba, regime, fp [Hz], mach_outlet, outlet_flow
    (True where clause 7's outlet-flow noise was added), internal_level_db
    (the trim's overall internal level Lpi [dB], before the spectrum).
    """
    return in_blocks(_gas_noise_block, m, p1, p2, rho1, k, kv, fl, fd, d, di, wall, rho2, c2, an=an, stp=stp,
                     rho_s=rho_s, c_s=c_s, outlet_flow=outlet_flow)


def _gas_noise_block(m, p1, p2, rho1, k, kv, fl, fd, d, di, wall, rho2, c2, an, stp, rho_s, c_s, outlet_flow):
    col = ac.column
    m, p1, p2, rho1, k, kv, fl, fd = (col(x) for x in (m, p1, p2, rho1, k, kv, fl, fd))
    k = np.where(np.abs(k - 1.0) < 1e-6, 1.0 + 1e-6, k)  # k/(k-1) is a removable singularity at exactly 1
    d, di, wall, rho2, c2 = (col(x) for x in (d, di, wall, rho2, c2))
    an, stp = col(np.broadcast_to(an, m.shape[:1])), col(np.broadcast_to(stp, m.shape[:1]))
    f = ac.BANDS_HZ.reshape(1, -1)
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        wa, fp, regime = source_power(m, p1, p2, rho1, k, kv, fl, fd, an, stp)
        mach_outlet = m / (rho2 * c2 * np.pi * d ** 2 / 4.0)
        mach_pipe = m / (rho2 * c2 * np.pi * di ** 2 / 4.0)
        velocity_term = 16.0 * np.log10(1.0 / (1.0 - np.minimum(mach_pipe, PIPE_MACH_CAP)))
        lpi = ac.internal_level(wa, rho2, c2, di) + velocity_term
        trim = 10.0 ** ((lpi + size_correction_db(d) + peak_spectrum(f, fp)) / 10.0)
        second = (mach_outlet > OUTLET_MACH_SECOND_SOURCE) & (d < di) & outlet_flow
        wr, fpr = outlet_flow_power(m, d, di, rho2, c2)
        outlet = 10.0 ** ((ac.internal_level(wr, rho2, c2, di) + velocity_term + peak_spectrum(f, fpr)) / 10.0)
        inside = 10.0 * np.log10(trim + np.where(second, outlet, 0.0))
        outside = inside + transmission_loss(f, di, wall, rho2, c2, rho_s, c_s) + ac.distance_to_1m(di, wall)
        level = ac.a_weighted_sum(outside)
    ok = (p1[:, 0] > p2[:, 0]) & np.isfinite(level)
    return {"level_dba": np.where(ok, level, np.nan), "regime": np.where(ok, regime[:, 0], 0),
            "fp": np.where(ok, fp[:, 0], np.nan), "mach_outlet": mach_outlet[:, 0],
            "outlet_flow": ok & second[:, 0], "internal_level_db": np.where(ok, lpi[:, 0], np.nan)}
