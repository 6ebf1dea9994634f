"""Typical trim factors by valve style, for rows that leave FL, xT or Fd blank.

Values are those of the typical-values table of IEC 60534-2-1 (factors at
full rated travel), recalled from memory; the style names are our own plain
keys.  A valve that uses any of them is flagged in the results, because the
real trim's factors can differ a good deal from the typical ones.
"""
from __future__ import annotations

# style key: (FL, xT, Fd, plain description)
TYPICAL_FACTORS: dict[str, tuple[float, float, float, str]] = {
    "globe_contoured_flow_to_open": (0.90, 0.72, 0.46, "globe, single port, contoured plug, flow tends to open"),
    "globe_contoured_flow_to_close": (0.80, 0.55, 1.00, "globe, single port, contoured plug, flow tends to close"),
    "globe_v_port": (0.90, 0.70, 0.48, "globe, single port, 3 V-port plug"),
    "globe_cage_drilled": (0.90, 0.68, 0.13, "globe, cage with 60 equal drilled holes"),
    "globe_cage_characterised": (0.90, 0.75, 0.41, "globe, characterised cage, 4 ports, flow outward"),
    "globe_double_port": (0.85, 0.70, 0.32, "globe, double port, contoured plug"),
    "angle_contoured": (0.90, 0.72, 0.46, "angle, contoured plug, flow tends to open"),
    "angle_venturi": (0.50, 0.20, 1.00, "angle, venturi outlet"),
    "small_flow_v_notch": (0.98, 0.84, 0.70, "small-flow trim, V-notch"),
    "rotary_eccentric_plug": (0.85, 0.60, 0.42, "rotary, eccentric spherical plug, flow tends to open"),
    "butterfly_centred_70": (0.62, 0.35, 0.57, "butterfly, centred shaft, swing-through, 70 deg"),
    "butterfly_centred_60": (0.70, 0.42, 0.50, "butterfly, centred shaft, swing-through, 60 deg"),
    "butterfly_eccentric_70": (0.67, 0.35, 0.57, "butterfly, eccentric shaft, offset seat, 70 deg"),
    "ball_full_bore": (0.74, 0.42, 0.99, "ball, full bore, 70 deg"),
    "ball_segmented": (0.60, 0.30, 0.98, "ball, segmented"),
}


def style_names() -> list[str]:
    return sorted(TYPICAL_FACTORS)


def normalise_style(text: str) -> str:
    return str(text).strip().lower().replace(" ", "_").replace("-", "_")
