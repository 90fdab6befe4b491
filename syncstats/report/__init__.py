"""Report layer: the files a run leaves behind.

``save_result(result, out_dir)`` writes ``results.csv`` (the tidy table),
``report.html`` (one self-contained page), ``methods.md`` (a methods paragraph with
references) and ``provenance.json`` (versions, parameters, seed, input hashes), all at
once or not at all. The layer draws and writes what the result holds; it computes no
statistic.
"""
from __future__ import annotations

from ._html import render_html, write_report_html
from ._methods import methods_text, write_methods_md
from ._provenance import build_provenance, write_provenance_json
from ._save import OUTPUT_FILES, save_result
from ._table import read_results_csv, write_results_csv

__all__ = [
    "save_result",
    "OUTPUT_FILES",
    "write_results_csv",
    "read_results_csv",
    "write_report_html",
    "render_html",
    "write_methods_md",
    "methods_text",
    "write_provenance_json",
    "build_provenance",
]
