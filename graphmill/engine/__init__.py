"""One relational plan, several engines.

``OPERATIONS`` names every set operation of pull, check and build with its contract
(``_contracts.py``); an :class:`Engine` implements them. Engines are leaves, imported only
when opened: ``local`` (embedded DuckDB, the default), ``reference`` (plain Arrow/numpy, the
code every engine is checked against), and any registered in the ``graphmill.engines``
entry-point group.
"""

from graphmill.engine._base import Engine, FileScan
from graphmill.engine._contracts import OPERATIONS, REFERENCE_ONLY, Offenders, Operation
from graphmill.engine._registry import (
    BUILTIN_ENGINES,
    DEFAULT_ENGINE,
    available_engines,
    check_settings,
    engine_class,
    memory_bytes,
    open_engine,
    spill_folder_of,
)

__all__ = [
    "BUILTIN_ENGINES",
    "DEFAULT_ENGINE",
    "OPERATIONS",
    "REFERENCE_ONLY",
    "Engine",
    "FileScan",
    "Offenders",
    "Operation",
    "available_engines",
    "check_settings",
    "engine_class",
    "memory_bytes",
    "open_engine",
    "spill_folder_of",
]
