"""What the package produces for people and files: pure producers, no printing.

:mod:`~kinetics.output.overview` (the JSON objects of ``check --json`` and
``solve --json``, the caution, the certificate in words),
:mod:`~kinetics.output.summary_text` (the summary in words: headers, definitions,
rows, notes), :mod:`~kinetics.output.export` (CSV, JSON, Parquet, Excel, written
atomically through :mod:`kinetics.files`), :mod:`~kinetics.output.plotting`,
:mod:`~kinetics.output.labels` and :mod:`~kinetics.output.graph_figure` (figures,
matplotlib imported lazily), :mod:`~kinetics.output.report` (the HTML report),
:mod:`~kinetics.output.fit_report` and :mod:`~kinetics.output.sweep_plot` (what a fit
and a sweep report).  Nothing here is imported by ``import kinetics``.
"""
