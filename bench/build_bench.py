"""`arrange build` of each demo against two floors measured in the same run.

* floor (a), ``floor_music21.py``: the music21-only script a user would write (music21
  writes the MusicXML and the MIDI; with the preview, verovio and resvg-py draw it);
* floor (b), ``floor_minimal.py``: the least work that writes the same files (string
  templates for MusicXML, mido for MIDI, ``json`` for the report; verovio and resvg-py
  for the preview), every decision given to it (``_digest.py`` reads a first build's
  files before any timing).  Its files are checked to be byte for byte ours.

Floor (a) reads the notes from the report of the first build.  Each comparison is
paired (``_paired.py``): medians, not the fastest run.  The row "bound b/a" pairs floor (b)
(in the "arrange" columns) with floor (a): a build that decided nothing and wrote the same
files could do no better against (a) than that ratio.

A project that reads a melody file is measured warm (its file already in the melody cache,
``writers.cache``: a rebuild, the arranger's usual case) and, on an extra row, cold
(``ARRANGE_NO_CACHE=1``: music21 imports and parses the file).  The cache is a temporary
folder of this run, never the user's.
Targets (issue 15): the default build <= 0.7x floor (a) and <= 1.3x floor (b);
``--formats musicxml,midi`` <= 1.5x floor (b).
"""
from __future__ import annotations

import os
import sys
import tempfile
from pathlib import Path

from _digest import digest
from _measure import ROOT, machine, precompile, run_once
from _paired import paired_both


def _same_files(ours: Path, floor: Path, slug: str) -> bool:
    exts = ("musicxml", "mid", "report.json", "report.md", "svg", "png")
    return all((ours / f"{slug}.{e}").read_bytes() == (floor / f"floor.{e}").read_bytes() for e in exts)


def main(runs: int = 7) -> dict[str, float]:
    precompile()
    py = sys.executable
    here = Path(__file__).resolve().parent
    worst = {"default/a": 0.0, "default/b": 0.0, "xml+midi/b": 0.0}
    print(f"build vs floors ({machine()}); paired medians of {runs} runs each; "
          "cpu = user + system seconds, wall = elapsed; load average "
          + " ".join(f"{x:.1f}" for x in os.getloadavg()))
    print(f"{'project':<26}{'comparison':<13}{'arrange cpu':>12}{'floor cpu':>10}{'ratio cpu':>10}"
          f"{'arrange wall':>13}{'floor wall':>11}{'ratio wall':>11}")
    with tempfile.TemporaryDirectory() as tmp:
        os.environ["ARRANGE_CACHE_DIR"] = str(Path(tmp) / "cache")      # inherited by every build
        os.environ.pop("ARRANGE_NO_CACHE", None)
        for proj in sorted((ROOT / "demo_projects").glob("*.toml")):
            out = Path(tmp) / proj.stem
            run_once([py, "-m", "arrange", "build", str(proj), "-o", str(out), "--no-parts", "--no-audio",
                      "--formats", "musicxml,midi,report,preview"])
            report = str(next(out.glob("*.report.json")))
            slug = Path(report).name[:-len(".report.json")]
            dg = str(digest(out / f"{slug}.musicxml", out / f"{slug}.mid", out / f"{slug}.report.md",
                            Path(tmp) / f"{proj.stem}.digest.json"))
            run_once([py, str(here / "floor_minimal.py"), dg, report, str(out / "check"), "--report", "--preview"])
            same = _same_files(out, out / "check", slug)
            default = [py, "-m", "arrange", "build", str(proj), "-o", str(out / "a"), "--no-parts",
                       "--no-audio", "--formats", "musicxml,midi,report,preview"]
            xml_midi = [py, "-m", "arrange", "build", str(proj), "-o", str(out / "x"),
                        "--formats", "musicxml,midi", "--no-parts", "--no-audio"]
            floor_a = [py, str(here / "floor_music21.py"), report, str(out / "fa"), "--preview"]
            floor_b = [py, str(here / "floor_minimal.py"), dg, report, str(out / "fb"), "--report", "--preview"]
            rows = (("default/a", default, floor_a),
                    ("default/b", default, floor_b),
                    # floor (b) against floor (a): the least any build of these files could
                    # reach against (a), every decision free (a bound on the default/a target)
                    ("bound b/a", floor_b, floor_a),
                    ("xml+midi/b", xml_midi, [py, str(here / "floor_minimal.py"), dg, report, str(out / "fm")]))
            if "file:" in proj.read_text(encoding="utf-8"):     # a melody file: also cold, without the cache
                rows += (("cold x+m/b", ["/usr/bin/env", "ARRANGE_NO_CACHE=1", *xml_midi],
                          [py, str(here / "floor_minimal.py"), dg, report, str(out / "fm")]),)
            for name, ours, floor in rows:
                p = paired_both(ours, floor, runs)
                if name in worst:
                    worst[name] = max(worst[name], p.cpu_ratio)
                print(f"{proj.stem:<26}{name:<13}{p.cpu_a:>12.3f}{p.cpu_b:>10.3f}{p.cpu_ratio:>10.2f}"
                      f"{p.wall_a:>13.3f}{p.wall_b:>11.3f}{p.wall_ratio:>11.2f}"
                      + ("" if name != "default/b" else f"   floor (b) files byte for byte ours: {'yes' if same else 'NO'}"))
    print("load average at the end " + " ".join(f"{x:.1f}" for x in os.getloadavg()))
    for name, target in (("default/a", 0.7), ("default/b", 1.3), ("xml+midi/b", 1.5)):
        print(f"worst {name} (cpu): {worst[name]:.2f} (target <= {target}: "
              f"{'met' if worst[name] <= target else 'NOT met'})")
    return worst


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 7)
