"""Shared acoustics of the noise methods: bands, A-weighting, the 1 m distance term.

Both IEC 60534-8-3 (gas) and IEC 60534-8-4 (liquid) predict the internal
sound pressure per third-octave band, take off the pipe wall's transmission
loss band by band, move the level to 1 m from the outer pipe wall, and sum
the A-weighted bands.  Arrays here are shaped (cases, bands).
"""
from __future__ import annotations

import numpy as np

from audit.iec.sizing import KV_TO_CV

# Nominal third-octave centre frequencies [Hz], 12.5 Hz to 20 kHz (IEC 61260-1).
BANDS_HZ = np.array([12.5, 16, 20, 25, 31.5, 40, 50, 63, 80, 100, 125, 160, 200, 250, 315, 400, 500,
                     630, 800, 1000, 1250, 1600, 2000, 2500, 3150, 4000, 5000, 6300, 8000, 10000,
                     12500, 16000, 20000], dtype=float)

# A-weighting at those bands [dB], IEC 61672-1, tabulated to 0.1 dB.
A_WEIGHT_DB = np.array([-63.4, -56.7, -50.5, -44.7, -39.4, -34.6, -30.2, -26.2, -22.5, -19.1, -16.1,
                        -13.4, -10.9, -8.6, -6.6, -4.8, -3.2, -1.9, -0.8, 0.0, 0.6, 1.0, 1.2, 1.3, 1.2,
                        1.0, 0.5, -0.1, -1.1, -2.5, -4.3, -6.6, -9.3])

# 4 / (pi p_ref^2) with p_ref = 20 uPa, rounded as the standards write it: Lpi = 10 lg(3.2e9 W rho c / Di^2).
INTERNAL_LEVEL_CONSTANT = 3.2e9

STEEL_DENSITY = 7800.0      # kg/m3
STEEL_SOUND_SPEED = 5000.0  # m/s, longitudinal waves in the pipe wall
AIR_DENSITY = 1.293         # kg/m3, outside the pipe (as the standards' examples take it)
AIR_SOUND_SPEED = 343.0     # m/s
AIR_PRESSURE = 101325.0     # Pa
N14_CV = 4.6e-3             # jet diameter constant with C as Cv, Dj in m (the standards' table of N)


def column(x) -> np.ndarray:
    """A per-case array as a (cases, 1) column to broadcast against the bands."""
    return np.asarray(x, float).reshape(-1, 1)


def jet_diameter(kv, fd, fl):
    """Jet diameter Dj [m] = N14 Fd sqrt(C FL), C as Cv, IEC 60534-8-3 and 8-4; kv [m3/h].

    fd: valve style modifier; fl: FL, or FLP/FP with fittings.
    """
    return N14_CV * fd * np.sqrt(kv * KV_TO_CV * fl)


def internal_level(power_w, rho, c, di):
    """Internal sound pressure level [dB re 20 uPa] of acoustic power in a pipe.

    power_w: acoustic power [W] (per band or total); rho [kg/m3], c [m/s]:
    fluid downstream; di: pipe inside diameter [m].  Plane-wave relation,
    IEC 60534-8-3 and 8-4.
    """
    with np.errstate(divide="ignore"):
        return 10.0 * np.log10(INTERNAL_LEVEL_CONSTANT * power_w * rho * c / di ** 2)


def distance_to_1m(di, wall):
    """Level change [dB] from the pipe's outer wall to 1 m from it (cylindrical spreading).

    di: inside diameter [m]; wall: wall thickness [m]. IEC 60534-8-3/8-4:
    -10 lg((Di + 2 ts + 2) / (Di + 2 ts)), lengths in metres.
    """
    outer = di + 2.0 * wall
    return -10.0 * np.log10((outer + 2.0) / outer)


def a_weighted_sum(band_levels_db):
    """A-weighted overall level [dBA] of (cases, bands) levels [dB]."""
    with np.errstate(divide="ignore"):
        return 10.0 * np.log10(np.sum(10.0 ** ((band_levels_db + A_WEIGHT_DB) / 10.0), axis=1))


def spectrum_shape(f, f_peak, low_slope, high_slope, offset_db):
    """Relative band level [dB] of a peaked spectrum: offset - 10 lg(0.25 (f/fp)^a + (f/fp)^-b)."""
    r = f / f_peak
    return offset_db - 10.0 * np.log10(0.25 * r ** high_slope + r ** -low_slope)
