"""A whole study: 12 invented subjects x 2 conditions, coupling only when "paced".

Run: python examples/study.py   (SYNCSTATS_EXAMPLE_SURROGATES=19 for a quick run)
Writes the demo recordings and the study folder into a temporary folder and prints the
second-level verdicts. Research software, not a medical device.
"""
import os
import tempfile
from pathlib import Path


from syncstats.study import analyze_study, make_demo_study

n_sur = int(os.environ.get("SYNCSTATS_EXAMPLE_SURROGATES", "99"))
work = Path(tempfile.mkdtemp(prefix="syncstats-study-"))
manifest = make_demo_study(work / "demo", n_subjects=12, rng=2026)
study = analyze_study(manifest, surrogate="time_shift", n_surrogates=n_sur, n_bootstrap=0,
                                cache_dir=work / "out.cache", rng=7)
out = study.save(work / "out")
sl = study.second_level
main = sl[(sl["group"] == "(all groups)") & (sl["approach"] == "parametric")]
print(main[["test", "condition", "contrast", "n_subjects", "estimate", "ci_low", "ci_high", "p_adjusted",
            "significant"]].to_string(index=False))
print(f"{study}\nwrote {out}")
