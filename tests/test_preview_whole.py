"""The preview a player reads: a 32-bar form and its transition are drawn whole.

References: music21 counts the measures of the written MusicXML; the preview SVG is
verovio's engraving (each measure a ``<g class="measure">``, verovio's SVG output), read
with ElementTree; the PNG's size is read from its IHDR chunk (the PNG specification, ISO/IEC
15948: width and height as the first two big-endian 4-byte fields after the signature and
the chunk's length and type).
"""
from __future__ import annotations

import struct
import xml.etree.ElementTree as ET
from pathlib import Path

from conftest import DEMOS, run_subprocess

SVG = "{http://www.w3.org/2000/svg}"


def _png_size(data: bytes) -> tuple[int, int]:
    assert data[:8] == b"\x89PNG\r\n\x1a\n" and data[12:16] == b"IHDR"      # PNG signature, IHDR first
    return struct.unpack(">II", data[16:24])


def test_the_preview_of_a_32_bar_form_draws_every_bar(tmp_path: Path) -> None:
    from music21 import converter, stream

    from arrange.writers.preview import MAX_HEIGHT

    out = tmp_path / "out"
    child = run_subprocess("build", str(DEMOS / "lantern-walk-soli.toml"), "-o", str(out))
    assert child.returncode == 0, child.stderr[-800:]
    assert "preview:" not in child.stderr                  # no page is left out
    score = converter.parse(str(out / "lantern-walk-soli.musicxml"))          # music21 as the reader
    bars = len(score.parts[0].getElementsByClass(stream.Measure))
    assert bars == 35                                       # the pickup, 3 x 8 bars, the 2-bar turn, 8 bars
    root = ET.parse(out / "lantern-walk-soli.svg").getroot()
    drawn = [g for g in root.iter(f"{SVG}g") if g.get("class") == "measure"]
    assert len(drawn) == bars                               # verovio drew every measure
    # the pages stand one under the other, each whole inside the picture
    pages = [el for el in root if el.tag == f"{SVG}svg"]
    _x, _y, width, height = (float(v) for v in root.get("viewBox", "").split())
    assert [float(p.get("y", "")) for p in pages] == [sum(float(q.get("height", "")) for q in pages[:k])
                                                       for k in range(len(pages))]
    assert sum(float(p.get("height", "")) for p in pages) == height
    # the PNG is the whole SVG at its declared size, within the preview's height limit
    w, h = _png_size((out / "lantern-walk-soli.png").read_bytes())
    assert (w, h) == (int(root.get("width", "")), int(root.get("height", "")))
    assert round(w / h, 3) == round(width / height, 3) and h <= MAX_HEIGHT
