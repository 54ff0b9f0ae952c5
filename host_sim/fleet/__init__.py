"""The fleet room: replay many traces on a dask cluster, score them streaming, report A/B results."""
