"""The example scripts run end to end (with few surrogates)."""
import importlib.util
from pathlib import Path

import pytest

EX = Path(__file__).resolve().parents[2] / "examples"


def _load(name):
    spec = importlib.util.spec_from_file_location(name, EX / f"{name}.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


@pytest.fixture(autouse=True)
def few_surrogates(monkeypatch):
    monkeypatch.setenv("SYNCSTATS_EXAMPLE_SURROGATES", "19")


def test_experimenter(tmp_path):
    res = _load("experimenter").main(str(tmp_path / "rep"))
    assert (tmp_path / "rep" / "report.html").is_file() and len(res.table) > 10


def test_reviewer():
    rows = _load("reviewer").main()
    assert len(rows) == 3 and all(len(t) >= 1 for _, t in rows)


def test_pipeline_author(tmp_path):
    tab = _load("pipeline_author").main(str(tmp_path))
    assert set(tab.ratio) == {"3:1", "4:1"}


def test_epochs(tmp_path):
    found = _load("epochs").main(str(tmp_path))
    assert (tmp_path / "report" / "epochs.csv").is_file()
    # the demo's 4:1 epoch (15-150 s) and 3:1 epoch (315-450 s) are found
    ep = found.epochs
    assert ((ep.ratio == "4:1") & (ep.start_s < 30) & (ep.end_s > 135)).any()
    assert ((ep.ratio == "3:1") & (ep.start_s < 330) & (ep.end_s > 435)).any()
