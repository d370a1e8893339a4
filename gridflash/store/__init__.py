"""Layer 5, the zarr store: one schema (variable and dimension names, units, long names,
provenance), a writer (chunk-aligned region writes, completion marks, resume) and a reader.
"""
