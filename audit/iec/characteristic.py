"""Inherent valve characteristics: relative flow coefficient against travel.

Idealised inherent characteristics (IEC 60534-1 / IEC 60534-2-4 shapes):
- linear: Phi = h;
- equal percentage: Phi = R^(h - 1), R the inherent rangeability;
- quick opening: Phi = sqrt(h), the usual idealisation of that trim.
Phi = C / C_rated, h = travel / rated travel.  Real trims depart from these
curves, most near the seat; the predicted travel is a screening estimate.
"""
from __future__ import annotations

import numpy as np

CHARACTERISTICS = ("linear", "equal_percentage", "quick_opening")
_SPELLINGS = {"equal_percent": "equal_percentage", "eq_percentage": "equal_percentage", "=%": "equal_percentage",
              "ep": "equal_percentage", "eq%": "equal_percentage", "lin": "linear", "qo": "quick_opening"}


def normalise_characteristic(text: str) -> str:
    """'Equal %', 'equal-percentage', '=%' -> 'equal_percentage'; blank -> 'equal_percentage' (the default).

    Anything else comes back as written (lower case), for the caller to refuse.
    """
    word = str(text).strip().lower().replace(" ", "_").replace("-", "_")
    if not word:
        return "equal_percentage"
    word = _SPELLINGS.get(word, word).replace("%", "percentage")
    return _SPELLINGS.get(word, word)


def travel_percent(cv_ratio, characteristic, rangeability):
    """Predicted travel [%] for a required-to-rated Cv ratio, per inherent characteristic.

    cv_ratio: C_required / C_rated (above 1: the valve cannot pass the flow,
    and the travel returned is the characteristic extended past 100 %);
    characteristic: 'linear', 'equal_percentage' or 'quick_opening' per
    case; rangeability: R of equal-percentage trims (> 1).
    Equal-percentage travel is floored at 0 where Phi < 1/R (below the
    characteristic's range: the valve is nearly shut).
    """
    ratio = np.asarray(cv_ratio, float)
    char = np.asarray(characteristic, dtype=object)
    with np.errstate(divide="ignore", invalid="ignore"):
        equal = 1.0 + np.log(ratio) / np.log(np.asarray(rangeability, float))
    h = np.select([char == "linear", char == "quick_opening"], [ratio, ratio ** 2], np.maximum(equal, 0.0))
    return 100.0 * h


def cv_ratio_at_travel(travel_pct, characteristic, rangeability):
    """Inverse of ``travel_percent``: Phi = C / C_rated at a travel [%]."""
    h = np.asarray(travel_pct, float) / 100.0
    char = np.asarray(characteristic, dtype=object)
    equal = np.asarray(rangeability, float) ** (h - 1.0)
    return np.select([char == "linear", char == "quick_opening"], [h, np.sqrt(np.maximum(h, 0))], equal)
