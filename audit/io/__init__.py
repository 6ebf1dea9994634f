"""Input and output at the edges: files in, tables in SI out; tables in, files out.

``reader`` turns bytes (CSV, XLSX, standard input) into a table of text cells;
``shapes`` folds the long layout into the wide one; ``units`` converts every
quantity to SI once; ``pipes`` looks up pipe bores; ``loader`` checks each row
and builds the line list the engine sizes; ``outputs`` writes the CSV and JSON
files and publishes a run's folder as a set.

May import: ``audit.iec`` (characteristic and style names), ``audit.fluid``
(fluid names), ``audit.workers`` (long CSV files formatted on every core).
Never the engine, studies or report.
"""
