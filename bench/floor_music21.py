"""The floor for `arrange build`: the same notes as music21 objects, written as
MusicXML and MIDI by music21 alone.

Usage: python floor_music21.py REPORT.json OUT_DIR [--preview]
With --preview the score is also drawn the way a user of music21 would draw it: verovio
lays out the MusicXML music21 wrote, resvg-py makes the PNG of every page at arrange's
picture density (1.5 pixels per SVG unit; the renderer arrange uses: cairosvg, used here
before, needs the system's Cairo, which this machine no longer has).
It reads the sounding pitches, onsets and durations from a report that
`arrange build` wrote, so both sides write exactly the same notes.
"""
from __future__ import annotations

import json
import sys
from pathlib import Path


def main(report_path: str, out_dir: str, preview: bool = False) -> None:
    from music21 import harmony, meter, note, stream, tempo
    from music21.midi import translate

    data = json.loads(Path(report_path).read_text())
    shift = data.get("rhythm", {}).get("pickup", 0)     # a pickup's notes have negative onsets
    score = stream.Score()
    n_parts = len(data["section"]["parts"])
    for k in range(n_parts):
        part = stream.Part(id=f"P{k + 1}")
        part.insert(0, meter.TimeSignature(data["meter"]))
        if k == 0:
            part.insert(0, tempo.MetronomeMark(number=data["tempo"]))
            last = None
            for ev in data["events"]:     # the same chord symbols above the lead
                if ev["chord"] != last:
                    last = ev["chord"]
                    figure = last[0] + last[1:].replace("b", "-", 1) if last[1:2] == "b" else last
                    try:
                        cs = harmony.ChordSymbol(figure)
                    except Exception:  # noqa: BLE001 - music21 rejects some spellings
                        continue
                    cs.writeAsChord = False
                    part.insert(ev["onset"] + shift, cs)
        for ev in data["events"]:
            n = note.Note(ev["pitches"][k])
            n.quarterLength = ev["duration"]
            part.insert(ev["onset"] + shift, n)
        score.insert(0, part)
    for layer in data.get("layers", []):
        for k in range(len(layer["parts"])):
            part = stream.Part()
            for nt in layer["notes"]:
                if nt["pitches"][k] is None:    # the part rests through a thinned chord
                    continue
                n = note.Note(nt["pitches"][k])
                n.quarterLength = nt["duration"]
                part.insert(nt["onset"] + shift, n)
            score.insert(0, part)
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    score.write("musicxml", fp=str(out / "floor.musicxml"))
    mf = translate.streamToMidiFile(score)
    mf.open(str(out / "floor.mid"), "wb")
    mf.write()
    mf.close()
    (out / "floor.report.json").write_text(json.dumps(data, indent=1), encoding="utf-8")
    if preview:
        import resvg_py
        import verovio

        tk = verovio.toolkit()
        tk.setOptions({"pageWidth": 2100, "pageHeight": 2970, "scale": 40, "adjustPageHeight": True})
        tk.loadData((out / "floor.musicxml").read_text())
        for i in range(1, tk.getPageCount() + 1):
            svg = tk.renderToSVG(i)
            (out / f"floor{i}.svg").write_text(svg, encoding="utf-8")
            png = resvg_py.svg_to_bytes(svg_string=svg, background="white", zoom=1.5)
            (out / f"floor{i}.png").write_bytes(bytes(png))


if __name__ == "__main__":
    main(sys.argv[1], sys.argv[2], "--preview" in sys.argv[3:])
