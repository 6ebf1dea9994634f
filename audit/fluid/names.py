"""Fluid names as the line list writes them: CoolProp names, mixtures `A[0.9]&B[0.1]`, custom fluids.

``properties.resolve_fluid`` turns a cell into a ``Fluid`` (it asks CoolProp whether a mixture can be modelled).
"""
from __future__ import annotations

import difflib
import re
from dataclasses import dataclass
from functools import lru_cache


@lru_cache(maxsize=1)
def known_fluids() -> list[str]:
    """CoolProp's pure-fluid names and aliases, for checks and suggestions."""
    import CoolProp.CoolProp as CP  # here, not above: reading a line list needs no CoolProp (io.early)

    names = set(CP.get_global_param_string("FluidsList").split(","))
    for name in list(names):
        aliases = CP.get_fluid_param_string(name, "aliases")
        names.update(a for a in aliases.split(",") if a)
    return sorted(names)


def suggest(name: str) -> str:
    close = difflib.get_close_matches(name, known_fluids(), n=3, cutoff=0.6)
    lower = {n.lower(): n for n in known_fluids()}
    close += difflib.get_close_matches(name.lower(), list(lower), n=3, cutoff=0.6)
    unique = []
    for c in close:
        c = lower.get(c, c)
        if c not in unique:
            unique.append(c)
    return ", ".join(unique[:3])


MIXTURE_COMPONENT = re.compile(r"^\s*([^\[\]&]+?)\s*\[\s*([0-9.eE+-]+)\s*\]\s*$")


@dataclass(frozen=True)
class Fluid:
    """A resolved fluid: CoolProp names of its components and their mole fractions."""
    components: tuple[str, ...]
    fractions: tuple[float, ...] = (1.0,)

    @property
    def is_mixture(self) -> bool:
        return len(self.components) > 1
