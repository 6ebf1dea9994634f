"""Process history: the historian's exports read, cleaned into samples, and audited sample by sample.

``read`` turns CSV or Parquet exports (wide or long) into one long table of
(signal, time, value); ``samples`` builds each valve's samples on its flow
signal's time stamps and counts every exclusion by reason; ``study`` audits
the clean samples through the same engine as the line list's cases, writes the
per-valve shares, percentiles and travel drift of history.csv, and picks the
representative samples that join the audit as cases hist_p05, hist_p50,
hist_p95.  docs/history.md is the user's description.

May import: ``audit.io`` (units, columns), the engine (``study`` runs it), rules'
thresholds.  Nothing below it imports this package; the pipeline calls it.
"""
