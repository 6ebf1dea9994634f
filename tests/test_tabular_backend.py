"""CoolProp's tabular backend, measured against the full equation of state (issue 6).

The measurement decides the default: away from saturation the tables are well within 0.1 % on
density and vapour pressure; beside the saturation curve, where control valves often work, they
are not, so the audit defaults to HEOS.  These tests keep that measurement honest and keep the
--backend option working end to end.
"""
import numpy as np

import tabular_accuracy
from audit.engine import Options, compute
from audit.io.loader import load_linelist
from conftest import SAMPLE_CSV


def test_tables_are_accurate_away_from_saturation_and_not_beside_it():
    e = tabular_accuracy.errors("Water")
    assert e["density_away"] < 1e-3 and e["vapour_pressure"] < 1e-3
    assert e["density_near"] > 1e-3  # why HEOS is the default


def test_default_backend_is_the_full_equation_of_state():
    assert Options().backend == "HEOS"


def test_sample_audit_runs_with_the_tabular_backend():
    audit = compute(load_linelist(SAMPLE_CSV), Options(backend="BICUBIC&HEOS"))
    with open(SAMPLE_CSV, encoding="utf-8") as fh:
        rows = sum(1 for line in fh if line.strip()) - 1  # the header
    assert len(audit.valves) + len(audit.rejected) == rows
    assert np.isfinite(audit.cases["cv"].to_numpy(float)).sum() > 100
