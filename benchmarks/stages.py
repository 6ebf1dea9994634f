"""Stage timers for the benchmarks: wrap the pipeline's functions so their time adds up by stage.

The wrappers change nothing but the clock readings; each benchmark prints the median per stage.
"""
from __future__ import annotations

import functools
import time
from collections import defaultdict

TIMES: dict[str, float] = defaultdict(float)


def timed(owner, name: str, label: str) -> None:
    """Wrap owner.name so that its time adds to TIMES[label]."""
    original = getattr(owner, name)

    @functools.wraps(original)
    def wrapper(*a, **k):
        t0 = time.perf_counter()
        try:
            return original(*a, **k)
        finally:
            TIMES[label] += time.perf_counter() - t0
    setattr(owner, name, wrapper)


ENGINE_STAGES = ("properties", "flows", "sizing", "outlet", "headroom", "rules", "ranking", "valve headroom")


def instrument_engine() -> None:
    """The engine's own stages (audit.engine.compute calls them through module globals)."""
    import audit.engine as engine
    import audit.ranking as ranking
    import rules

    for name, label in (("add_properties", "properties"), ("add_mass_flow", "flows"), ("add_sizing", "sizing"),
                        ("add_outlet_state", "outlet"), ("add_case_headroom", "headroom"),
                        ("add_valve_headroom", "valve headroom")):
        timed(engine, name, label)
    timed(rules, "apply_rules", "rules")
    timed(ranking, "rank_valves", "ranking")


def instrument_pipeline() -> None:
    """Reading and writing, around the engine."""
    import audit.pipeline as pipeline

    from audit.io.early import EarlyRead

    timed(pipeline, "load_linelist", "read line list")    # the file read here (no child, or it failed)
    timed(EarlyRead, "collect", "read line list")          # waiting for the child's tables, and unpickling
    timed(pipeline, "finish_linelist", "read line list")  # the fluid names resolved
    timed(pipeline, "write_csvs", "write CSV")  # results.csv's table is built inside it
