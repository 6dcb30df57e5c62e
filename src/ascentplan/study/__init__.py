"""Trade studies: limit sweeps and dispersions on local processes or Dask, resumable."""
