"""sdmnet: planning simulator for data-center interconnect networks built on multicore fiber."""

from __future__ import annotations

__version__ = "0.1.0"
