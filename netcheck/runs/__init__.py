"""Many specs: variants and executors (local processes, Dask), which specs a change
affects, earlier results and the margins that shrank since, and provenance."""
