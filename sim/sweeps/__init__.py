"""Stage 8, sweeps: takes a sweep file (a base scenario, parameters to vary, metrics and
constraints) and gives a table of cases with their metrics, ranked, with the Pareto front
(:mod:`.sweep`). Cases run in parallel on a local process pool or on Dask, and a rerun
resumes from the cases already stored.
"""
