"""What people read: the HTML and PDF report, its plots, and the planner's work list.

``html`` (the report's content and page), ``plots`` (per-valve and fleet
charts), ``pdf`` (printing the page), ``worklist`` (worklist.xlsx), and the
``templates`` folder.

May import: ``audit.iec`` (plots), ``audit.io.outputs``, ``audit.ranking``,
``audit.history`` (the history section) and ``rules``.  Nothing imports this package except the pipeline.
"""
