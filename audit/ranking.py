"""Ranking of audited valves: most at risk of choking first, ties by severity."""
from __future__ import annotations

import numpy as np
import pandas as pd

from rules.base import Severity


def _join_by(keys: np.ndarray, texts: np.ndarray, sep: str) -> pd.Series:
    """Join texts per key, keeping their order (a dict pass: far cheaper than groupby-apply)."""
    out: dict[int, list[str]] = {}
    for k, t in zip(keys.tolist(), texts.tolist()):
        out.setdefault(k, []).append(t)
    return pd.Series({k: sep.join(v) for k, v in out.items()}, dtype=object)


def rank_valves(valves: pd.DataFrame, cases: pd.DataFrame, findings: pd.DataFrame) -> pd.DataFrame:
    """One row per audited valve with its worst case, severity and finding sentences.

    Rank 1 has the highest choke_ratio over its cases; equal ratios are
    ordered by the worst severity, then by tag, so the order is stable.
    Valves with no sized case (every case failed) come last.
    """
    v = cases["valve"].to_numpy(int)
    ratio = cases["choke_ratio"].to_numpy(float)
    order = pd.DataFrame({"valve": v, "ratio": np.where(np.isfinite(ratio), ratio, -np.inf),
                          "case": cases["case"].to_numpy(dtype=object)})
    worst = order.sort_values(["valve", "ratio"], ascending=[True, False], kind="stable").drop_duplicates("valve")
    worst = worst.set_index("valve").reindex(range(len(valves)))
    out = valves[["tag", "area", "service"]].copy()
    out["worst_case"] = np.where(np.isfinite(worst["ratio"]), worst["case"], "")
    out["choke_ratio_max"] = np.where(np.isfinite(worst["ratio"]), worst["ratio"], np.nan)
    f = findings.copy()
    f["valve"] = v[f["case_row"].to_numpy(int)] if len(f) else pd.Series(dtype=int)
    f["case_order"] = cases["case_order"].to_numpy()[f["case_row"].to_numpy(int)] if len(f) else 0
    f = f.sort_values(["valve", "severity", "case_order"], ascending=[True, False, True], kind="stable")
    per_code = f.drop_duplicates(["valve", "code"])
    sentences = _join_by(per_code["valve"].to_numpy(int), per_code["sentence"].to_numpy(dtype=object), " ")
    codes = _join_by(per_code["valve"].to_numpy(int), per_code["code"].to_numpy(dtype=object), ";")
    worst_sev = f.groupby("valve")["severity"].max()
    sev = worst_sev.reindex(range(len(valves))).fillna(0).astype(int).to_numpy()
    out["severity_level"] = sev
    out["severity"] = [Severity(s).label for s in sev]
    out["findings"] = sentences.reindex(range(len(valves))).fillna("").to_numpy()
    out["finding_codes"] = codes.reindex(range(len(valves))).fillna("").to_numpy()
    out["valve"] = np.arange(len(valves))
    key = out.assign(_r=np.nan_to_num(out["choke_ratio_max"].to_numpy(float), nan=-np.inf))
    key = key.sort_values(["_r", "severity_level", "tag"], ascending=[False, False, True], kind="stable")
    key.insert(0, "rank", np.arange(1, len(key) + 1))
    return key.drop(columns="_r").reset_index(drop=True)
