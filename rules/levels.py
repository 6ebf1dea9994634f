"""The five levels a finding can have; every other module of the package grades with these."""
from enum import IntEnum


class Severity(IntEnum):
    """How soon a finding needs someone's attention, in our own words."""
    CLEAR = 0   # nothing found
    NOTE = 1    # worth knowing: data or assumptions
    WATCH = 2   # near a limit: check at the next opportunity
    PLAN = 3    # past a limit: plan a fix for the next window
    URGENT = 4  # the valve cannot do its job, or people may be exposed

    @property
    def label(self) -> str:
        return {0: "clear", 1: "note", 2: "watch", 3: "plan", 4: "urgent"}[int(self)]
