"""Layer 6, use of the results: lookup with interpolation, saturation lines, inspection,
plots and exports (CSV, Parquet, NetCDF).
"""
