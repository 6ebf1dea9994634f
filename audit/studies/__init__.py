"""Questions asked of a sized line list: how far can it go, what would fit, what changed.

``headroom`` (flow multipliers to the high-travel limit and to full travel,
choked ceiling), ``trims`` (re-screening against a table of alternative trims),
``compare`` (two audits side by side).

May import: ``audit.iec``, ``audit.io``, ``audit.casetable``; ``trims`` also the
engine (it re-runs it for each alternative).  The engine imports ``headroom``.
"""
