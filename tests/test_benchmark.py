"""The benchmark still works (smoke test, no timing assertions), and on its line list the
vectorised engine agrees with the plain row-by-row reference (PropsSI per property, fluids'
scalar sizing) within 0.5 % on every case (issue 6)."""
import numpy as np

import bench_audit
from audit.engine import compute
from audit.io.loader import load_linelist
from synthetic import make_linelist


def test_engine_agrees_with_the_row_by_row_reference_on_every_case(tmp_path):
    path = make_linelist(300, tmp_path / "bench.csv")
    ref, _ = bench_audit.reference_row_by_row(path)
    cases = compute(load_linelist(path)).cases
    ours = dict(zip(zip(cases["tag"], cases["case"]), cases["kv"]))
    assert len(ref) == len(cases) == 900
    for r in ref:
        assert r["error"] == "", r
        kv = ours[(r["tag"], r["case"])]
        assert np.isfinite(kv) and abs(kv / r["kv"] - 1) < 5e-3, (r, kv)


def test_benchmark_script_runs_at_a_small_size(capsys):
    assert bench_audit.main(["--small", "40"]) == 0
    out = capsys.readouterr().out
    for text in ("valve-cases/s", "growth for 10x", "peak memory", "faster per case", "HTML", "PDF"):
        assert text in out


def test_median_run_takes_median_times_and_highest_memory():
    # --audit-repeat: a noisy machine's slow run moves no judged time, and a target on memory is a ceiling.
    runs = [{"seconds": s, "end_to_end": s + 2, "import_seconds": 2.0, "peak_mb": m, "tree_pss_mb": m, "rss_mb": m,
             "stages": {"rules": s / 5}, "early": True, "cases": 6}
            for s, m in ((5.0, 300.0), (9.0, 390.0), (6.0, 310.0))]
    r = bench_audit._median_run(runs)
    assert (r["seconds"], r["end_to_end"], r["stages"]["rules"]) == (6.0, 8.0, 1.2)
    assert r["peak_mb"] == 390.0 and r["cases"] == 6
