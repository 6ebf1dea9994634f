"""The sample line list: the valves it was built to choke, cavitate and flash are found and ranked."""
import importlib.util

import numpy as np
import pytest

from audit.engine import compute
from audit.loader import load_linelist
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


def test_ranked_by_choke_ratio(audit):
    v = audit.valves
    ratios = v["choke_ratio_max"].to_numpy(float)
    assert np.all(np.diff(ratios) <= 0)
    assert list(v["rank"]) == list(range(1, len(v) + 1))
    built = [t for group in make_sample.BUILT_TO.values() for t in group]
    rank = dict(zip(v["tag"], v["rank"]))
    ratio = dict(zip(v["tag"], v["choke_ratio_max"]))
    for a in built:
        for b in built:
            if ratio[a] > ratio[b]:
                assert rank[a] < rank[b]


def test_csv_and_xlsx_samples_give_the_same_audit(audit):
    other = compute(load_linelist(SAMPLE_XLSX))
    assert list(other.valves["tag"]) == list(audit.valves["tag"])
    assert np.allclose(other.cases["cv"].to_numpy(float), audit.cases["cv"].to_numpy(float), equal_nan=True)


def test_sample_exercises_every_contract_column():
    import csv
    import re
    spec_text = (ROOT.parent / "shared" / "spec" / "linelist.md").read_text()
    first_cells = re.findall(r"^\| ([^|]*`[^|]*) \|", spec_text, flags=re.M)
    contract = {name for cell in first_cells for name in re.findall(r"`([a-z_<>]+)`", cell)}
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
