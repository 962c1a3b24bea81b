"""Run every benchmark in bench/ and print their tables, one after another.

    python bench/run_all.py            # all
    python bench/run_all.py startup    # only the ones whose name contains "startup"
"""
from __future__ import annotations

import runpy
import sys
from pathlib import Path

HERE = Path(__file__).resolve().parent


def main() -> None:
    sys.path.insert(0, str(HERE))
    sys.path.insert(0, str(HERE.parent))
    wanted = sys.argv[1:]
    for script in sorted(HERE.glob("*_bench.py")):
        if wanted and not any(w in script.stem for w in wanted):
            continue
        print(f"\n== {script.stem} ==", flush=True)
        try:
            runpy.run_path(str(script), run_name="__main__")
        except SystemExit as stop:       # a script that ends with sys.exit(...)
            if stop.code not in (None, 0):
                print(f"{script.stem} exited {stop.code}", flush=True)


if __name__ == "__main__":
    main()
