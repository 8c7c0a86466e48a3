"""The review report: figures, tables and a rendered document, from a results bundle alone.

`render.build_report(bundle_dir)` writes report.html, report.pdf, figures/
(SVG for the page, PDF for papers) and tables/ (LaTeX and CSV) into the
bundle; `render.report_command` is the `analyser report DIR` entry point.
Nothing here refits or imports the inference package: every number comes
from results.json, the sample tables and the fitted data in the bundle, and
model curves are recomputed from posterior samples with the physics core.
"""
