"""Layer 2, run description: a TOML config into a validated, frozen :class:`RunSpec` in SI units.

Units and heavy-end parsing live here; nothing in this layer computes a flash or touches a store.
"""
