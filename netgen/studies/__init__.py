"""Design studies: sweeps over a grid of parameter values, the best point, and tolerance runs
with drawn parameter values; run one after another, on a process pool, or on a Dask cluster."""
