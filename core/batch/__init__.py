"""Batch runs (``mixtype batch``): many studies in one start-up, on a local pool of processes or a Dask
cluster."""
