"""Process history: the historian's exports read, cleaned into samples, and audited sample by sample.

``read`` holds CSV or Parquet exports (wide or long) as their columns
(pyarrow) and parses a signal's times and values only when asked for it;
``samples`` builds each valve's samples on its flow signal's time stamps and
counts every exclusion by reason; ``study`` audits the clean samples a chunk
of valves at a time (on worker processes, one per core) through the same
engine as the line list's cases, with properties and gas outlets from checked
tables (``audit.fluid.tables``, ``audit.fluid.outlet_tables``), writes the
per-valve shares, percentiles and travel drift of history.csv, and picks the
representative samples that join the audit as cases hist_p05, hist_p50,
hist_p95.  docs/history.md is the user's description.

May import: ``audit.io`` (units, columns), the engine (``study`` runs it), rules'
thresholds.  Nothing below it imports this package; the pipeline calls it.
"""
