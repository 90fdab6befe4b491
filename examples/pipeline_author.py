"""Pipeline author: one statistics step in an existing pipeline, through the command
line, with options in a TOML file and the exit status checked.

Writes the demo study to a CSV and an event file (as a recording system would export
them), runs `syncstats analyze` on them, and reads the tidy results.csv back.
Usage:  python examples/pipeline_author.py [WORK_DIR]
"""
import os
import subprocess
import sys
import tempfile
from pathlib import Path

import pandas as pd

from syncstats.io import Recording, write_events, write_recording_csv
from syncstats.simulate import load_demo

N_SURROGATES = int(os.environ.get("SYNCSTATS_EXAMPLE_SURROGATES", "199"))


def main(work=None):
    work = Path(work or tempfile.mkdtemp(prefix="syncstats-pipeline-"))
    work.mkdir(parents=True, exist_ok=True)
    demo = load_demo()
    write_recording_csv(Recording(name="session", signals={"breath": demo.signals["breath"]}, fs=demo.fs),
                        work / "session.csv")
    write_events(demo.events["heart"], work / "rpeaks.txt")
    (work / "study.toml").write_text(
        f'ratios = "3:1,4:1"\nsurrogate = "time_shift"\nn_surrogates = {N_SURROGATES}\n'
        'correction = "max_stat"\nwindows = 120.0\nseed = 3\n'
    )
    out = work / "results"
    cmd = [sys.executable, "-m", "syncstats.cli", "analyze", str(work / "session.csv"), "--events",
           f"heart={work / 'rpeaks.txt'}", "--config", str(work / "study.toml"), "--out", str(out), "--overwrite",
           "--quiet"]
    proc = subprocess.run(cmd, capture_output=True, text=True)
    if proc.returncode == 2:  # bad input: one sentence on stderr says what to fix
        raise SystemExit(f"fix the input: {proc.stderr.strip()}")
    proc.check_returncode()
    table = pd.read_csv(out / "results.csv")
    keep = table[table.significant == True]  # noqa: E712 (the column may hold NA)
    print(keep[["signal_a", "signal_b", "ratio", "window_start_s", "value", "p_adjusted"]].to_string(index=False))
    return table


if __name__ == "__main__":
    main(*sys.argv[1:])
