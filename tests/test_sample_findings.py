"""The sample line list: the valves it was built to choke, cavitate and flash are found and ranked."""
import importlib.util

import numpy as np
import pytest

from audit.engine import compute
from audit.io.loader import load_linelist
from conftest import ROOT, SAMPLE_CSV, SAMPLE_XLSX

spec = importlib.util.spec_from_file_location("make_sample", ROOT / "sample_linelist" / "make_sample.py")
make_sample = importlib.util.module_from_spec(spec)
spec.loader.exec_module(make_sample)


@pytest.fixture(scope="module")
def audit():
    return compute(load_linelist(SAMPLE_CSV))


def _codes(audit, tag, case="max"):
    c = audit.cases
    return c[(c["tag"] == tag) & (c["case"] == case)]["findings"].iloc[0].split(";")


def test_built_to_choke(audit):
    for tag in make_sample.BUILT_TO["choke"]:
        assert "CHOKED" in _codes(audit, tag), tag


def test_built_to_cavitate(audit):
    for tag in make_sample.BUILT_TO["cavitate"]:
        assert {"CAV_CHOKED", "CAV_DEVELOPED"} & set(_codes(audit, tag)), tag


def test_built_to_flash(audit):
    for tag in make_sample.BUILT_TO["flash"]:
        assert "FLASHING" in _codes(audit, tag), tag


def test_choke_ratio_max_is_the_largest_over_the_cases(audit):
    # The ranking is by consequence (tests/test_ranking.py); choke_ratio_max stays a column of its own.
    per_valve = audit.cases.groupby("tag")["choke_ratio"].max()
    v = audit.valves.set_index("tag")
    assert np.allclose(v["choke_ratio_max"].to_numpy(float), per_valve.reindex(v.index).to_numpy(float),
                       equal_nan=True)


def test_csv_and_xlsx_samples_give_the_same_audit(audit):
    other = compute(load_linelist(SAMPLE_XLSX))
    assert list(other.valves["tag"]) == list(audit.valves["tag"])
    assert np.allclose(other.cases["cv"].to_numpy(float), audit.cases["cv"].to_numpy(float), equal_nan=True)


def test_sample_exercises_every_documented_column():
    import csv

    from test_docs import documented_columns
    contract = documented_columns() - {"case"}  # the sample is in the wide layout; tests/data has the long one
    assert {"tag", "flow_<case>", "pipe_out_wall", "xfz"} <= contract
    with open(SAMPLE_CSV, newline="") as fh:
        rows = list(csv.DictReader(fh))
    used = {h.split(" [")[0] for h in rows[0] if any(r[h].strip() for r in rows)}
    for column in contract:
        if "<case>" in column:
            assert any(u.startswith(column.replace("<case>", "")) for u in used), column
        else:
            assert column in used, column
    assert "rated_kv" in used and "p_atm" in used
