"""Layer 3, grid and chunks: every axis value of a run (pressure, temperature, composition
axes from named streams, sampling designs) and the chunk plan that aligns dask and zarr chunks.
"""
