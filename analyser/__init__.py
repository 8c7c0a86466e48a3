"""Joint orbit analysis of stars around a compact dark mass.

The package is a one-way pipeline: campaign files -> validated data -> forward
model -> joint nested-sampling fit -> results bundle -> review report.
"""

__version__ = "0.1.0"

from pathlib import Path as _Path

from . import _compiled_cache

_compiled_cache.configure(_Path(__file__).parent)
