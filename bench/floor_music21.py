"""The floor for `arrange build`: the same notes as music21 objects, written as
MusicXML and MIDI by music21 alone.

Usage: python floor_music21.py REPORT.json OUT_DIR
It reads the sounding pitches, onsets and durations from a report that
`arrange build` wrote, so both sides write exactly the same notes.
"""
from __future__ import annotations

import json
import sys
from pathlib import Path


def main(report_path: str, out_dir: str) -> None:
    from music21 import meter, note, stream, tempo
    from music21.midi import translate

    data = json.loads(Path(report_path).read_text())
    score = stream.Score()
    n_parts = len(data["section"]["parts"])
    for k in range(n_parts):
        part = stream.Part(id=f"P{k + 1}")
        part.insert(0, meter.TimeSignature(data["meter"]))
        if k == 0:
            part.insert(0, tempo.MetronomeMark(number=data["tempo"]))
        for ev in data["events"]:
            n = note.Note(ev["pitches"][k])
            n.quarterLength = ev["duration"]
            part.insert(ev["onset"], n)
        score.insert(0, part)
    for layer in data.get("layers", []):
        for k in range(len(layer["parts"])):
            part = stream.Part()
            for nt in layer["notes"]:
                n = note.Note(nt["pitches"][k])
                n.quarterLength = nt["duration"]
                part.insert(nt["onset"], n)
            score.insert(0, part)
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    score.write("musicxml", fp=str(out / "floor.musicxml"))
    mf = translate.streamToMidiFile(score)
    mf.open(str(out / "floor.mid"), "wb")
    mf.write()
    mf.close()


if __name__ == "__main__":
    main(sys.argv[1], sys.argv[2])
