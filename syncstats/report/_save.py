"""save_result: every output file of a run, written into a new folder all at once."""
from __future__ import annotations

from pathlib import Path

from .._errors import SyncstatsInputError
from ..results import ResultData
from . import _compare, _epochs, _html, _methods, _provenance, _table
from .._atomic import OutputFolder, write_folder_atomically

__all__ = ["save_result", "OUTPUT_FILES"]

#: the files of a saved result, in writing order
OUTPUT_FILES = ("results.csv", "report.html", "methods.md", "provenance.json")


def save_result(result: ResultData, out_dir, *, overwrite: bool = False, record_paths: bool | None = None) -> Path:
    """Write results.csv, report.html, methods.md and provenance.json into ``out_dir``
    (and epochs.csv, epochs_summary.csv when the result carries epochs).

    Parameters
    ----------
    result : ResultData
        What ``syncstats.analyze`` returned.
    out_dir : str, path-like or OutputFolder
        A new or empty folder (parents are created), or one reserved earlier with
        :class:`syncstats._atomic.OutputFolder` (the command line reserves ``--out`` before
        analysing). A non-empty folder is refused unless ``overwrite=True``; a symbolic
        link is always refused.
    overwrite : bool, default False
        Replace a non-empty ``out_dir`` (swapped in by renames after the new folder is
        complete, so the old contents stay intact if writing fails). Refused if an input
        file lies inside it. A reserved folder carries its own setting.
    record_paths : bool, optional
        Also record absolute input paths and the Python interpreter's location in
        provenance.json (default: only the paths as given, with content hashes). A
        reserved folder carries its own setting.

    Returns
    -------
    pathlib.Path
        The absolute path of the folder.

    Raises
    ------
    SyncstatsInputError
        ``result`` is not a result, or ``out_dir`` exists, is non-empty and
        ``overwrite`` is False, or is a file.

    Notes
    -----
    The files are built in a hidden temporary folder beside ``out_dir`` and renamed into
    place only when all four are written; after any failure nothing is left behind.
    """
    if not isinstance(result, ResultData):
        raise SyncstatsInputError(
            f"save_result expects the result of syncstats.analyze (a ResultData), got "
            f"{type(result).__name__}; pass the object analyze returned."
        )
    if record_paths is None:
        record_paths = out_dir.record_paths if isinstance(out_dir, OutputFolder) else False
    prov = _provenance.build_provenance(result, record_paths=record_paths)

    def build(folder: Path) -> None:
        written = [
            _table.write_results_csv(result, folder / "results.csv"),
            _html.write_report_html(result, folder / "report.html", provenance=prov),
            _methods.write_methods_md(result, folder / "methods.md"),
        ] + _epochs.write_epoch_files(result, folder) + _extra_csvs(result, folder)
        written += [f for f in [_compare.write_null_comparison_csv(result, folder / "null_comparison.csv")] if f]
        _provenance.write_provenance_json(result, folder / "provenance.json",
                                          output_files=written, record=prov)

    return write_folder_atomically(out_dir, build, overwrite=overwrite,
                                   protected=list(result.inputs or []))


def _extra_csvs(result, folder: Path) -> list:
    """Tidy CSVs of the optional analyses (locking over trials, clusters), same writer as results.csv."""
    from types import SimpleNamespace

    from . import _clusters, _trials

    frames = {**_trials.csv_frames(result), **_clusters.csv_frames(result)}
    return [_table.write_results_csv(SimpleNamespace(table=df), folder / name) for name, df in frames.items()]
