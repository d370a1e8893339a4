"""Layer 4, execution of one block: one block of cells in, one block result out, no hidden
state (a task can be retried). Numpy around the thermodynamics layer; no dask, no files.
"""
