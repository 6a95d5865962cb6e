"""Many specs: variants and executors (local processes, Dask), which specs a change
affects, baselines and margin drift, and provenance."""
