"""Every documented column, valid and invalid values and units, through the command line (seeded).

The same check as benchmarks/fuzz_linelist.py, which runs 10,000 rows: every non-blank row in exactly one
of valves.csv / rejected.csv, no exit 70, no traceback, no formula-like text cell in any CSV (OWASP rule),
audit.json valid JSON (no NaN, no Infinity).
"""
import pytest

import fuzz_linelist
from test_docs import documented_columns


def test_generator_covers_every_documented_column():
    made = {c.rsplit("_", 1)[0] + "_<case>" if c.rsplit("_", 1)[-1] in fuzz_linelist.CASES else c
            for c in fuzz_linelist.header()}
    assert documented_columns() - {"case"} <= made


@pytest.mark.parametrize("seed", [11, 12, 13])
def test_random_rows_over_every_column_lose_nothing_and_stay_safe(tmp_path, seed):
    problems, _ = fuzz_linelist.run(120, seed, tmp_path)
    assert problems == []
