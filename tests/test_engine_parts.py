"""Parts (worker processes) and blocks equal one pass: CoolProp calls, sizing, CSV files.

Source: the audit itself in one process (each state is computed on its own, so cutting the cases in
parts must not change a single value); the sample line list holds water, steam, hydrocarbons, gas
mixtures and flashing and custom-fluid rows.
"""
import collections
import os
import pathlib

import numpy as np
import pandas as pd

import audit.engine as engine
from audit.engine import Options, compute
from audit.io.loader import load_linelist
from audit.workers import in_parts

SAMPLE = pathlib.Path(__file__).resolve().parents[1] / "sample_linelist" / "fenmoor_unit.csv"


def test_in_parts_joins_the_parts_in_order_from_other_processes():
    out = in_parts(lambda a, b: {"i": np.arange(a, b), "pid": np.full(b - a, os.getpid())}, 100, 10, parts=2)
    assert np.array_equal(out["i"], np.arange(100))
    pids = set(out["pid"].tolist())
    assert os.getpid() not in pids and 1 <= len(pids) <= 2   # worker processes did the work, not this one


def test_in_parts_runs_here_when_parts_would_be_small():
    out = in_parts(lambda a, b: {"pid": np.full(b - a, os.getpid())}, 100, 60, parts=2)
    assert set(out["pid"].tolist()) == {os.getpid()}


def test_compute_in_parts_equals_one_process(monkeypatch):
    ll = load_linelist(SAMPLE)
    one = compute(ll, Options())
    monkeypatch.setattr(engine, "PART_MIN_STATES", 20)
    monkeypatch.setattr(os, "cpu_count", lambda: 2)
    calls = []
    real = engine.in_parts
    monkeypatch.setattr(engine, "in_parts", lambda f, n, m: calls.append((n, m)) or real(f, n, m))
    parts = compute(load_linelist(SAMPLE), Options())
    assert len(calls) == 2 and all(n >= 2 * m for n, m in calls)   # both CoolProp stages really ran in parts
    pd.testing.assert_frame_equal(one.cases, parts.cases)
    pd.testing.assert_frame_equal(one.valves, parts.valves)
    pd.testing.assert_frame_equal(one.findings, parts.findings)


def test_write_csv_in_parts_equals_one_process(monkeypatch, tmp_path):
    import audit.io.outputs as outputs

    table = outputs.results_table(compute(load_linelist(SAMPLE), Options()).cases)
    one = outputs.to_csv_text(table).encode("utf-8")
    outputs.write_csv(tmp_path / "one.csv", table)
    monkeypatch.setattr(outputs, "PART_MIN_ROWS", 10)
    monkeypatch.setattr(outputs, "CSV_BLOCK_ROWS", 3)  # several blocks in each part
    monkeypatch.setattr(os, "cpu_count", lambda: 2)
    calls = []
    real = outputs.in_parts
    monkeypatch.setattr(outputs, "in_parts", lambda f, n, m: calls.append(n // m) or real(f, n, m))
    outputs.write_csv(tmp_path / "parts.csv", table)
    assert len(table) >= 20 and calls and calls[0] >= 2   # really written in parts
    assert (tmp_path / "one.csv").read_bytes() == one
    assert (tmp_path / "parts.csv").read_bytes() == one
    assert sorted(p.name for p in tmp_path.iterdir()) == ["one.csv", "parts.csv"]   # no part file left behind


def test_array_models_in_blocks_equal_one_pass(monkeypatch):
    """The sizing and the noise methods in blocks of cases (audit.iec.blocks) give every case the
    numbers of one pass over all."""
    import audit.iec.blocks as blocks

    one = compute(load_linelist(SAMPLE), Options())
    monkeypatch.setattr(blocks, "BLOCK", 7)   # many blocks, the last one short
    calls = collections.Counter()

    def counted(f):
        def run(*a, **k):
            calls[f.__name__] += 1
            return f(*a, **k)
        return run

    real = blocks.in_blocks
    for module in ("sizing", "noise_gas", "noise_liquid"):
        target = __import__(f"audit.iec.{module}", fromlist=["in_blocks"])
        monkeypatch.setattr(target, "in_blocks", lambda f, *a, **k: real(counted(f), *a, **k))
    in_blocks = compute(load_linelist(SAMPLE), Options())
    # each model really ran in several blocks (the sample's gas and liquid cases are more than 7 each)
    assert min(calls[n] for n in ("_size_block", "_gas_noise_block", "_liquid_noise_block")) >= 2, calls
    pd.testing.assert_frame_equal(one.cases, in_blocks.cases)
    pd.testing.assert_frame_equal(one.findings, in_blocks.findings)
