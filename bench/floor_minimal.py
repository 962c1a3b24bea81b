"""Floor (b) for `arrange build`: the least work that writes the same files.

Usage: python floor_minimal.py DIGEST.json REPORT.json OUT_DIR [--report] [--preview]

Every musical decision comes for free: ``_digest.py`` stored what a build's score and MIDI
hold (read before any timing).  This script only writes: the MusicXML with string
templates (one per element, texts already escaped), the MIDI through mido (one message
per event, then ``save``), with --report the report (its JSON loaded and dumped again by
``json``, its Markdown copied), and with --preview
the same picture arrange draws: verovio is called as arrange's preview called it (the
documents it handed verovio hold its decisions, key signatures per staff, symbol spacing,
line breaks; ``_digest.py`` recorded the calls), the pages drawn after the last document are
stacked into one SVG at the same size, and resvg-py draws the PNG.  Its files are
byte for byte arrange's (``build_bench.py`` checks that), so the two sides write the same
files and differ only in the work done to decide them.
"""
from __future__ import annotations

import json
import re
import sys
from pathlib import Path

_VIEWBOX = re.compile(r'viewBox="0 0 ([\d.]+) ([\d.]+)"')


def _xml(node: list, out: list[str]) -> None:
    tag, attrs, text, children, tail = node
    out.append("<" + tag + "".join(f" {k}={v}" for k, v in attrs))
    if text is None and not children:
        out.append(" />")
    else:
        out.append(">")
        if text is not None:
            out.append(text)
        for c in children:
            _xml(c, out)
        out.append(f"</{tag}>")
    out.append(tail)


def _preview(calls: list) -> tuple[bytes, bytes]:
    import resvg_py
    import verovio

    tk = verovio.toolkit()
    pages: list[str] = []
    for name, args in calls:                     # arrange's calls into verovio, as recorded
        out = getattr(tk, name)(*args)
        if name == "loadData":
            pages = []
        elif name == "renderToSVG":
            pages.append(out)
    # the text clean-up arrange's preview applies to each drawn page (no decision in it):
    # its own functions, so the floor follows them as they change (this checkout's)
    sys.path.insert(0, str(Path(__file__).resolve().parent.parent))
    from arrange.writers import preview

    sizes = []
    for d in pages:
        m = _VIEWBOX.search(d)
        sizes.append((float(m.group(1)), float(m.group(2))) if m else (2100.0, 2970.0))
    drawn, high = 0, 0.0              # the pages that fit the picture's height, as arrange's preview keeps
    while drawn < len(pages) and (drawn == 0 or (high + sizes[drawn][1]) * 1.5 <= preview.MAX_HEIGHT):
        high += sizes[drawn][1]
        drawn += 1
    docs, sizes = [preview.drawn_page(svg) for svg in pages[:drawn]], sizes[:drawn]
    width, height = max(w for w, _ in sizes), sum(h for _, h in sizes)
    body, y = [], 0.0
    for d, (w, h) in zip(docs, sizes):
        inner = d[d.index("<svg"):]
        body.append(re.sub(r"<svg\b", f'<svg x="0" y="{y:g}" width="{w:g}" height="{h:g}"', inner, count=1))
        y += h
    svg = ('<?xml version="1.0" encoding="UTF-8"?>\n'
           f'<svg xmlns="http://www.w3.org/2000/svg" xmlns:xlink="http://www.w3.org/1999/xlink" '
           f'width="{round(width * 1.5)}" height="{round(height * 1.5)}" viewBox="0 0 {width:g} {height:g}">\n'
           f'<rect x="0" y="0" width="{width:g}" height="{height:g}" fill="white"/>\n'
           + "\n".join(body) + "\n</svg>\n")
    return svg.encode("utf-8"), bytes(resvg_py.svg_to_bytes(svg_string=svg, background="white"))


def main(digest_path: str, report_path: str, out_dir: str, report: bool, preview: bool) -> None:
    import mido

    data = json.loads(Path(digest_path).read_text(encoding="utf-8"))
    out = Path(out_dir)
    out.mkdir(parents=True, exist_ok=True)
    parts = [data["prolog"]]
    _xml(data["score"], parts)
    parts.append(data["end"])
    xml = "".join(parts)
    (out / "floor.musicxml").write_bytes(xml.encode("utf-8"))

    m = data["midi"]
    mf = mido.MidiFile(type=m["type"], ticks_per_beat=m["ticks"])
    for rows in m["tracks"]:
        trk = mido.MidiTrack()
        for d in rows:
            meta = d.pop("meta")
            trk.append(mido.MetaMessage(**d) if meta else mido.Message(**d))
        mf.tracks.append(trk)
    mf.save(str(out / "floor.mid"))

    if report:
        data_out = json.loads(Path(report_path).read_text(encoding="utf-8"))
        (out / "floor.report.json").write_text(json.dumps(data_out, indent=2, ensure_ascii=False) + "\n",
                                               encoding="utf-8")
        (out / "floor.report.md").write_text(data["report_md"], encoding="utf-8")
    if preview:
        svg, png = _preview(data["layout"])
        (out / "floor.svg").write_bytes(svg)
        (out / "floor.png").write_bytes(png)


if __name__ == "__main__":
    main(sys.argv[1], sys.argv[2], sys.argv[3], "--report" in sys.argv[4:], "--preview" in sys.argv[4:])
