"""Write the demo recording into syncstats/data (package data).

Usage::

    python -m syncstats.simulate._build_demo            # into syncstats/data
    python -m syncstats.simulate._build_demo OUT_DIR    # anywhere else

The files are fully determined by ``syncstats.simulate._demo.DEMO_SEED``; rerun this
script whenever the demo model changes (tests/unit/test_simulate.py checks that the
shipped files match a fresh simulation).
"""
from __future__ import annotations

import sys

from ._demo import write_demo


def main(argv=None) -> int:
    argv = sys.argv[1:] if argv is None else argv
    sizes = write_demo(argv[0] if argv else None)
    for name, size in sizes.items():
        print(f"{name}: {size / 1e6:.3f} MB")
    print(f"total: {sum(sizes.values()) / 1e6:.3f} MB")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
