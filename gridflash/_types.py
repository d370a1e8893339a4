"""Literal aliases for the option strings used across gridflash, gathered in one place."""

from __future__ import annotations

from typing import Literal

__all__ = ["EosName", "RootChoice", "SchedulerKind"]

#: Cubic equations of state: Peng-Robinson 1976, Peng-Robinson with the Robinson-Peng 1978
#: acentric-factor correlation, Soave-Redlich-Kwong 1972.
EosName = Literal["PR76", "PR78", "SRK"]

#: Which root of the cubic to use for a phase.
RootChoice = Literal["min_gibbs", "vapour", "liquid"]

#: Local dask scheduler kinds.
SchedulerKind = Literal["threads", "processes"]
