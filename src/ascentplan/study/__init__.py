"""Trade studies: limit sweeps and dispersions on local processes or Dask, resumable.

The public names are gathered in :mod:`ascentplan.study.sweep`.
"""
