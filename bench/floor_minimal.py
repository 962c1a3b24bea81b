"""Floor (b) for `arrange build`: the least work that writes the same files.

Usage: python floor_minimal.py REPORT.json OUT_DIR [--preview]

Reads the notes (sounding pitches, onsets, durations), chords, tempo and meter from a
report that `arrange build` wrote and writes them with string templates (MusicXML: one
measure element per bar, notes cut and tied at bar lines, rests in the gaps, a <harmony>
per chord change) and mido (MIDI: one track per part).  With --preview, verovio lays the
MusicXML out and resvg-py draws the PNG, as arrange does.  No spelling, beams, marks or
layout rules: a floor, not a writer.
"""
from __future__ import annotations

import json
import sys
from fractions import Fraction
from pathlib import Path

STEPS = ["C", "C#", "D", "D#", "E", "F", "F#", "G", "G#", "A", "A#", "B"]
TYPES = {Fraction(4): "whole", Fraction(2): "half", Fraction(1): "quarter", Fraction(1, 2): "eighth",
         Fraction(1, 4): "16th", Fraction(3): "half", Fraction(3, 2): "quarter", Fraction(3, 4): "eighth"}
DIV = 24


def _note(pitch: int | None, dur: Fraction, tie: str) -> str:
    if pitch is None:
        head = "<rest/>"
    else:
        name = STEPS[pitch % 12]
        alter = "<alter>1</alter>" if len(name) > 1 else ""
        head = f"<pitch><step>{name[0]}</step>{alter}<octave>{pitch // 12 - 1}</octave></pitch>"
    ties = "".join(f'<tie type="{t}"/>' for t in tie.split()) if tie else ""
    typ = TYPES.get(dur)
    return (f"<note>{head}<duration>{int(dur * DIV)}</duration>{ties}"
            + (f"<type>{typ}</type>" if typ else "") + "</note>")


def _part(notes: list[tuple[Fraction, Fraction, int | None]], bar: Fraction, bars: int,
          chords: list[tuple[Fraction, str]], head: str) -> str:
    measures: list[list[str]] = [[] for _ in range(bars)]
    pos = [Fraction(0)] * bars
    ch = iter(chords)
    nxt = next(ch, None)
    for onset, dur, pitch in notes:
        t, end = onset, onset + dur
        while t < end:
            m = int(t // bar)
            if m >= bars:
                break
            if pos[m] < t - m * bar:
                measures[m].append(_note(None, t - m * bar - pos[m], ""))
            piece = min(end, (m + 1) * bar) - t
            tie = ("stop " if t > onset else "") + ("start" if t + piece < end else "")
            while nxt is not None and nxt[0] <= t:
                measures[m].append(f'<harmony><root><root-step>{nxt[1][0]}</root-step></root>'
                                   f'<kind text="{nxt[1][1:]}">other</kind></harmony>')
                nxt = next(ch, None)
            measures[m].append(_note(pitch, piece, tie.strip()))
            pos[m] = t - m * bar + piece
            t += piece
    out = []
    for m, items in enumerate(measures):
        if pos[m] < bar:
            items.append(_note(None, bar - pos[m], ""))
        attrs = head if m == 0 else ""
        out.append(f'<measure number="{m + 1}">{attrs}{"".join(items)}</measure>')
    return "".join(out)


def main(report_path: str, out_dir: str, preview: bool) -> None:
    import mido

    data = json.loads(Path(report_path).read_text())
    num, den = (int(x) for x in data["rhythm"]["written_meter"].split("/"))
    bar = Fraction(4 * num, den)
    shift = Fraction(data["rhythm"]["pickup"]).limit_denominator(96)
    rows = []
    names = [p["name"] for p in data["section"]["parts"]]
    for k in range(len(names)):
        rows.append([(Fraction(e["onset"]).limit_denominator(96) + shift,
                      Fraction(e["duration"]).limit_denominator(96), e["pitches"][k]) for e in data["events"]])
    for la in data.get("layers", []):
        for k, p in enumerate(la["parts"]):
            names.append(p["name"])
            rows.append([(Fraction(n["onset"]).limit_denominator(96) + shift,
                          Fraction(n["duration"]).limit_denominator(96), n["pitches"][k])
                         for n in la["notes"] if n["pitches"][k] is not None])
    end = max(o + d for r in rows for o, d, _ in r)
    bars = int(-(-end // bar))
    chords, last = [], None
    for e in data["events"]:
        if e["chord"] != last:
            last = e["chord"]
            chords.append((Fraction(e["onset"]).limit_denominator(96) + shift, last))
    head = (f"<attributes><divisions>{DIV}</divisions><time><beats>{num}</beats><beat-type>{den}"
            "</beat-type></time></attributes>")
    plist = "".join(f'<score-part id="P{i + 1}"><part-name>{n}</part-name></score-part>'
                    for i, n in enumerate(names))
    parts = "".join(f'<part id="P{i + 1}">{_part(r, bar, bars, chords if i == 0 else [], head)}</part>'
                    for i, r in enumerate(rows))
    xml = ('<?xml version="1.0" encoding="UTF-8"?><score-partwise version="4.0">'
           f"<part-list>{plist}</part-list>{parts}</score-partwise>")
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    (out / "floor.musicxml").write_text(xml, encoding="utf-8")
    (out / "floor.report.json").write_text(json.dumps(data, indent=1), encoding="utf-8")

    mf = mido.MidiFile(type=1, ticks_per_beat=480)
    mf.tracks.append(mido.MidiTrack([mido.MetaMessage("set_tempo", tempo=mido.bpm2tempo(data["tempo"])),
                                     mido.MetaMessage("time_signature", numerator=num, denominator=den)]))
    for i, r in enumerate(rows):
        evs = []
        for o, d, p in r:
            evs.append((int(o * 480), 1, mido.Message("note_on", channel=i % 16, note=p, velocity=80)))
            evs.append((int((o + d) * 480) - 1, 0, mido.Message("note_off", channel=i % 16, note=p)))
        evs.sort(key=lambda x: (x[0], x[1]))
        trk, now = mido.MidiTrack(), 0
        for t, _, msg in evs:
            trk.append(msg.copy(time=t - now))
            now = t
        mf.tracks.append(trk)
    mf.save(str(out / "floor.mid"))
    if preview:
        import resvg_py
        import verovio

        tk = verovio.toolkit()
        tk.setOptions({"pageWidth": 2100, "pageHeight": 2970, "scale": 40, "adjustPageHeight": True})
        tk.loadData(xml)
        svgs = [tk.renderToSVG(i) for i in range(1, tk.getPageCount() + 1)]
        for i, svg in enumerate(svgs):        # every page, as arrange draws every page
            (out / f"floor{i}.svg").write_text(svg, encoding="utf-8")
            (out / f"floor{i}.png").write_bytes(bytes(resvg_py.svg_to_bytes(svg_string=svg, background="white")))


if __name__ == "__main__":
    main(sys.argv[1], sys.argv[2], "--preview" in sys.argv[3:])
