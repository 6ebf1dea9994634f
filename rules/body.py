"""Body against line: data that a plant engineer would want confirmed before trusting the audit.

- A body more than two nominal sizes below the upstream line is unusual (one or two sizes
  below is common: a valve is often a size or two under its line).  Nominal sizes on the
  standard DN series; the line's from its bore.
- A rated Cv far above what any body of that size passes points at a Kv written as Cv, a
  size in the wrong unit, or the wrong valve's data.  The bound, Cv of about 100 times the
  size in inches squared, is what a full-bore ball valve of that size reaches (from memory).
Both are notes asking to confirm the data, once per valve.
"""
from __future__ import annotations

import numpy as np

from .base import Rule, RuleResult, Threshold, col, combine, findings, text

_COMMON_STEPS = np.array([15, 20, 25, 40, 50, 80, 100, 150, 200, 250, 300, 350, 400, 450, 500, 600, 750, 900,
                          1050, 1200], float)  # the sizes bodies are usually made in: steps are counted on these


def nominal_step(d_m: np.ndarray) -> np.ndarray:
    """Position of a bore or size [m] on the common DN series (nearest, on a log scale)."""
    d = np.asarray(d_m, float) * 1000.0
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.argmin(np.abs(np.log(d[:, None] / _COMMON_STEPS[None, :])), axis=1) if d.size else np.zeros(0, int)


def evaluate(cases, th) -> RuleResult:
    first = ~cases.duplicated("valve").to_numpy()
    size, line = col(cases, "valve_size"), np.maximum(col(cases, "pipe_in_id"), col(cases, "valve_size"))
    steps = nominal_step(line) - nominal_step(size)
    d_in = size / 0.0254
    rated = col(cases, "rated_cv")
    per_in2 = rated / d_in ** 2
    tag = text(cases, "tag")
    small = first & np.isfinite(size) & np.isfinite(line) & (steps > th["size_steps"])
    big_cv = first & np.isfinite(per_in2) & (per_in2 > th["cv_per_in2"])
    return RuleResult(findings=combine(
        findings(small, "BODY_SMALL", lambda i: (
            f"The body ({size[i] * 1000:.0f} mm) is {steps[i]} nominal sizes below the upstream line "
            f"(bore {line[i] * 1000:.0f} mm): unusual; confirm the valve and line sizes of {tag[i]}."), value=steps),
        findings(big_cv, "CV_IMPLAUSIBLE", lambda i: (
            f"Rated Cv {rated[i]:.4g} is {per_in2[i]:.0f} times the body size in inches squared, more than a "
            f"full-bore body of that size passes (about {th['cv_per_in2']:.0f}): confirm the rated Cv (not Kv?) "
            "and the valve size."), value=per_in2),
    ))


RULE = Rule(
    code="body", title="Body against line", order=80, evaluate=evaluate,
    thresholds=(
        Threshold("size_steps", 2.0, "nominal sizes", "common practice",
                  "a body more nominal sizes than this below the upstream line is questioned"),
        Threshold("cv_per_in2", 100.0, "Cv per in2", "common practice (from memory)",
                  "rated Cv per body size in inches squared above which the data are questioned", low=1.0),
    ),
    description="body size against the line, rated Cv against the body size: notes asking to confirm the data",
)
