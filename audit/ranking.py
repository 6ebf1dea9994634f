"""Ranking of audited valves by consequence, and one sentence per finding family per valve.

Rank (docs/outputs.md, `valves.csv`): severity first (urgent before plan before watch ...),
then the line list's `criticality` (high before medium before low), then the capacity margin
(smallest first: the valve nearest to running out of capacity), then the tag.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from rules.base import Severity

CRITICALITY_ORDER = {"high": 0, "medium": 1, "low": 2}


def _joined(keys, values, sep: str, unique: bool = False) -> dict:
    """key -> its values joined by ``sep`` in the order given (first occurrence only, if ``unique``).

    A plain loop: pandas' groupby with a Python join builds a Series per group, some fifty times slower
    for twenty thousand valves."""
    parts: dict = {}
    for k, v in zip(list(keys), list(values)):
        if unique:
            parts.setdefault(k, {})[v] = None   # a dict keeps first-seen order and drops repeats
        else:
            parts.setdefault(k, []).append(v)
    return {k: sep.join(v) for k, v in parts.items()}


def family_summary(cases: pd.DataFrame, findings: pd.DataFrame) -> pd.DataFrame:
    """One row per (valve, finding family): the worst finding, its case, and the other cases where it fires.

    Worst = highest severity, then the largest ``value`` the rule gave (choke ratio, level,
    velocity over its limit, ...), then the earliest case.  Columns: valve, family, code,
    severity, case, also (other case names, in case order), sentence (the worst finding's
    sentence, with "Also at case ..." where the family fires in other cases too, naming the level
    of another case where it is not the worst's).
    """
    cols = ["valve", "family", "code", "severity", "case", "also", "sentence"]
    if not len(findings):
        return pd.DataFrame(columns=cols)
    row = findings["case_row"].to_numpy(int)
    valve = cases["valve"].to_numpy(int)[row]
    family = findings["family"].to_numpy(dtype=object)
    severity = findings["severity"].to_numpy(int)
    value = np.nan_to_num(findings["value"].to_numpy(float), nan=-np.inf)
    case = cases["case"].to_numpy(dtype=object)[row]
    order = cases["case_order"].to_numpy(int)[row]
    family_rank = pd.factorize(family, sort=True)[0]  # families in the order of their names
    # One stable sort: by valve and family, then the worst first (numpy's lexsort takes the last key first).
    idx = np.lexsort((order, -value, -severity, family_rank, valve))
    v, f = valve[idx], family_rank[idx]
    group = np.ones(len(idx), dtype=bool)
    group[1:] = (v[1:] != v[:-1]) | (f[1:] != f[:-1])
    starts = np.flatnonzero(group)
    worst = idx[starts]
    sev, cas, odr = severity[idx].tolist(), case[idx].tolist(), order[idx].tolist()
    also = []
    for a, b in zip(starts.tolist(), starts[1:].tolist() + [len(idx)]):
        seen, others = {cas[a]}, []
        for j in range(a + 1, b):  # each other case once, at its own worst level (its first row here)
            if cas[j] not in seen:
                seen.add(cas[j])
                label = cas[j] if sev[j] == sev[a] else f"{cas[j]} ({Severity(sev[j]).label})"
                others.append((odr[j], label))
        others.sort(key=lambda o: o[0])  # in case order (stable)
        also.append(", ".join(label for _, label in others))
    sentence = [s if not a else f"{s} Also at case {a}."
                for s, a in zip(findings["sentence"].to_numpy(dtype=object)[worst].tolist(), also)]
    out = pd.DataFrame({"valve": valve[worst], "family": family[worst],
                        "code": findings["code"].to_numpy(dtype=object)[worst], "severity": severity[worst],
                        "case": case[worst], "also": also, "sentence": sentence})
    return out.sort_values(["valve", "severity"], ascending=[True, False], kind="stable").reset_index(drop=True)[cols]


def _per_valve(cases: pd.DataFrame, n: int) -> pd.DataFrame:
    """Per-valve figures over the sized cases: worst case, margins, travel and gain ranges."""
    wanted = [c for c in ("valve", "case", "case_order", "choke_ratio", "flow_mult_full_travel", "travel_pct",
                          "gain_below") if c in cases]
    sized = cases.loc[cases["converged"].to_numpy(bool), wanted]  # a compact copy of the columns used here
    g = sized.groupby("valve")
    out = pd.DataFrame(index=range(n))
    out["choke_ratio_max"] = g["choke_ratio"].max()
    out["capacity_margin"] = g["flow_mult_full_travel"].min() if "flow_mult_full_travel" in sized else np.nan
    out["travel_min_pct"] = g["travel_pct"].min()
    out["travel_max_pct"] = g["travel_pct"].max()
    gain = sized["gain_below"] if "gain_below" in sized else pd.Series(np.nan, index=sized.index)
    out["gain_min"] = gain.groupby(sized["valve"]).min()
    out["gain_max"] = gain.groupby(sized["valve"]).max()
    margin = sized.get("flow_mult_full_travel", pd.Series(np.nan, index=sized.index)).to_numpy(float)
    worst = sized.assign(_m=np.where(np.isfinite(margin), margin, np.inf)) \
        .sort_values(["valve", "_m", "case_order"], kind="stable").drop_duplicates("valve")
    out["worst_case"] = pd.Series(worst["case"].to_numpy(), index=worst["valve"].to_numpy())
    out["worst_case"] = out["worst_case"].fillna("")
    return out


def rank_valves(valves: pd.DataFrame, cases: pd.DataFrame, findings: pd.DataFrame) -> pd.DataFrame:
    """One row per audited valve with its rank, severity, margins and finding sentences (see module docstring)."""
    n = len(valves)
    out = valves[["tag", "area", "service", "criticality"]].copy()
    out = pd.concat([out, _per_valve(cases, n)], axis=1)
    families = family_summary(cases, findings)
    sev = families.groupby("valve")["severity"].max().reindex(range(n)).fillna(0).astype(int).to_numpy()
    out["severity_level"] = sev
    out["severity"] = [Severity(s).label for s in sev]
    sentences = _joined(families["valve"].tolist(), families["sentence"].tolist(), " ")
    out["findings"] = [sentences.get(i, "") for i in range(n)]
    if len(findings):
        v = cases["valve"].to_numpy(int)[findings["case_row"].to_numpy(int)]
        codes = _joined(v.tolist(), findings["code"].tolist(), ";", unique=True)
        out["finding_codes"] = [codes.get(i, "") for i in range(n)]
    else:
        out["finding_codes"] = ""
    out["valve"] = np.arange(n)
    margin = out["capacity_margin"].to_numpy(float)
    key = out.assign(_crit=out["criticality"].map(CRITICALITY_ORDER).fillna(1).to_numpy(int),
                     _margin=np.where(np.isfinite(margin), margin, np.inf))
    key = key.sort_values(["severity_level", "_crit", "_margin", "tag"], ascending=[False, True, True, True],
                          kind="stable")
    key.insert(0, "rank", np.arange(1, n + 1))
    return key.drop(columns=["_crit", "_margin"]).reset_index(drop=True)
