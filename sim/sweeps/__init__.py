"""Stage 8, sweeps: takes a sweep file (a base scenario, parameters to vary, metrics and
constraints) and gives a table of cases with their metrics, ranked, with the Pareto front.

Modules, in the order they build on each other: :mod:`.providers` (the named sources of
numbers for metrics: run, model, backdrive, loads, check), :mod:`.metrics` (metric paths and
constraints: parsing, validation, evaluation), :mod:`.spec` (the sweep file and the parameter
values of every case), :mod:`.cases` (resolved cases, their keys, the worker function
:func:`~.cases.run_case` and the stored results a rerun resumes from), :mod:`.ranking` (the
table, the ranking, the Pareto front and the output files) and :mod:`.executors`
(:func:`~.executors.run_sweep`: the missing cases on a local process pool or on Dask).
"""
