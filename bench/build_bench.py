"""`arrange build` of each demo against two floors measured in the same run.

* floor (a), ``floor_music21.py``: the music21-only script a user would write (music21
  writes the MusicXML and the MIDI; with the preview, verovio and cairosvg draw it);
* floor (b), ``floor_minimal.py``: the least work that writes the same files (string
  templates for MusicXML, mido for MIDI; verovio and resvg-py for the preview).

Both floors read the notes from the report of a first build, so every side writes the
same notes.  Each comparison is paired (``_paired.py``): medians, not the fastest run.
Targets (issue 15): the default build <= 0.7x floor (a) and <= 1.3x floor (b);
``--formats musicxml,midi`` <= 1.5x floor (b).
"""
from __future__ import annotations

import sys
import tempfile
from pathlib import Path

from _measure import ROOT, machine, precompile, run_once
from _paired import paired


def main(runs: int = 7) -> dict[str, float]:
    precompile()
    py = sys.executable
    here = Path(__file__).resolve().parent
    worst = {"default/a": 0.0, "default/b": 0.0, "xml+midi/b": 0.0}
    print(f"build vs floors ({machine()}); paired medians of {runs} runs each")
    print(f"{'project':<26}{'comparison':<26}{'arrange s':>10}{'floor s':>9}{'ratio':>7}")
    with tempfile.TemporaryDirectory() as tmp:
        for proj in sorted((ROOT / "demo_projects").glob("*.toml")):
            out = Path(tmp) / proj.stem
            run_once([py, "-m", "arrange", "build", str(proj), "-o", str(out)])
            report = str(next(out.glob("*.report.json")))
            default = [py, "-m", "arrange", "build", str(proj), "-o", str(out / "a"), "--no-parts",
                       "--no-audio", "--formats", "musicxml,midi,report,preview"]
            xml_midi = [py, "-m", "arrange", "build", str(proj), "-o", str(out / "x"),
                        "--formats", "musicxml,midi", "--no-parts", "--no-audio"]
            rows = (("default/a", default, [py, str(here / "floor_music21.py"), report, str(out / "fa"), "--preview"]),
                    ("default/b", default, [py, str(here / "floor_minimal.py"), report, str(out / "fb"), "--preview"]),
                    ("xml+midi/b", xml_midi, [py, str(here / "floor_minimal.py"), report, str(out / "fm")]))
            for name, ours, floor in rows:
                ta, tf, ratio = paired(ours, floor, runs)
                worst[name] = max(worst[name], ratio)
                print(f"{proj.stem:<26}{name:<26}{ta:>10.3f}{tf:>9.3f}{ratio:>7.2f}")
    for name, target in (("default/a", 0.7), ("default/b", 1.3), ("xml+midi/b", 1.5)):
        print(f"worst {name}: {worst[name]:.2f} (target <= {target}: {'met' if worst[name] <= target else 'NOT met'})")
    return worst


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 7)
