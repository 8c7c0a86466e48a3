"""Joint orbit analysis of stars around a compact dark mass.

The package is a one-way pipeline: campaign files -> validated data -> forward
model -> joint nested-sampling fit -> results bundle -> review report.
"""

__version__ = "0.1.0"
