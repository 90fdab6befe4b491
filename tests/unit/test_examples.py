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
