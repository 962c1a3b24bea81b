"""``arrange build P.toml --vary KEY=V1,V2 ...``: every combination in its own folder.

References: the MusicXML 4.0 XSD (``musicxml`` package) for each variant's score,
music21 reading each score back, and the Markdown table syntax of CommonMark/GFM
(one row per line, cells split by ``|``).
"""
from __future__ import annotations

import json
from pathlib import Path

import pytest
from conftest import BASIC, run_cli, snapshot, write_project

from arrange.theory.pitch import pitch_name


def _rows(md: str) -> list[list[str]]:
    lines = [ln for ln in md.splitlines() if ln.startswith("|")]
    return [[c.strip() for c in ln.strip("|").split("|")] for ln in lines[2:]]   # after header + rule


# a trumpet soli over a trombone pad (our own test scenario)
PROJECT = BASIC.replace('name = "trombones-4"', 'name = "trumpets-4"') + '''
[[layers]]
section = "trombones-4"
role = "pad"
rhythm = "2"
'''
SLUG = "test-cue"


@pytest.fixture(scope="module")
def varied(tmp_path_factory: pytest.TempPathFactory) -> Path:
    out = tmp_path_factory.mktemp("variants")
    src = write_project(tmp_path_factory.mktemp("src"), PROJECT)
    r = run_cli("build", str(src), "--vary", "voicing=close,drop2,spread",
                "--vary", "groove=swing,latin", "-o", str(out))
    assert r.exit_code == 0, r.output
    return out


def test_six_folders_and_six_rows(varied: Path) -> None:
    folders = sorted(p.name for p in varied.iterdir() if p.is_dir())
    assert len(folders) == 6
    rows = _rows((varied / "variants.md").read_text())
    assert len(rows) == 6
    combos = {r[0] for r in rows}
    assert combos == {f"voicing={v}, groove={g}" for v in ("close", "drop2", "spread")
                      for g in ("swing", "latin")}


def test_each_variant_is_what_its_row_says(varied: Path, musicxml_schema) -> None:
    from music21 import converter

    for row in _rows((varied / "variants.md").read_text()):
        name, folder_link, warnings, span, lowest, picture = row
        folder = varied / folder_link.split("](")[1].rstrip("/)")
        report = json.loads((folder / f"{SLUG}.report.json").read_text())
        voicing = name.split(",")[0].split("=")[1]
        groove = name.split("groove=")[1]
        assert {e["voicing"] for e in report["events"]} == {voicing}
        assert report["groove"] == groove
        assert int(warnings) == len(report["warnings"])
        lo, hi = report["chain"]["span"]
        assert span.startswith(f"{pitch_name(lo)}-{pitch_name(hi)}")
        every = [p for e in report["events"] for p in e["pitches"]]
        every += [p for la in report["layers"] for n in la["notes"] for p in n["pitches"]
              if p is not None]                      # null: a pad part resting
        assert lowest.startswith(pitch_name(min(every)))
        # the picture: the preview where one is written, else the score, said so
        target = picture.split("](")[1].rstrip(")")
        assert (varied / target).is_file()
        if target.endswith(".musicxml"):
            assert "no preview" in picture
        score = folder / f"{SLUG}.musicxml"
        musicxml_schema.validate(str(score))                     # MusicXML 4.0 XSD
        assert len(converter.parse(str(score)).parts) == 8      # music21: 4 lead + 4 pad parts


def test_dotted_key_and_layer_key(tmp_path: Path) -> None:
    out = tmp_path / "out"
    r = run_cli("build", str(write_project(tmp_path, PROJECT)), "--vary", "section.voicing=drop2",
                "--vary", "layers.1.role=pad,hits", "--vary", "tempo=92,120", "-o", str(out))
    assert r.exit_code == 0, r.output
    assert len(_rows((out / "variants.md").read_text())) == 4
    roles = set()
    for folder in (p for p in out.iterdir() if p.is_dir()):
        report = json.loads((folder / f"{SLUG}.report.json").read_text())
        roles.add(report["layers"][0]["role"])
        assert report["tempo"] in (92, 120)
    assert roles == {"pad", "hits"}


@pytest.mark.parametrize(("vary", "needle"), [
    ("colour=red,blue", "colour"),
    ("section.name=trumpets-4,bogus", "bogus"),
    ("section.colour=1", "section.colour"),
    ("groove=swing,polka", "polka"),
    ("layers.3.role=pad", "layers.3.role"),
    ("tempo=90,fast", "fast"),
    ("voicing", "voicing"),
])
def test_unknown_key_or_value_exits_2_before_writing(tmp_path: Path, vary: str, needle: str) -> None:
    src = write_project(tmp_path, PROJECT)
    out = tmp_path / "out"
    r = run_cli("build", str(src), "--vary", "voicing=close,drop2", "--vary", vary, "-o", str(out))
    assert r.exit_code == 2, r.output
    assert needle in r.output and "--vary" in r.output
    assert "Traceback" not in r.output
    assert snapshot(out) == {} and not out.exists()


def test_varying_a_swing_project_to_latin_drops_the_swing_ratio(tmp_path: Path) -> None:
    """The issue's own example: a swing project (with its ratio) varied to latin builds,
    and the latin variant plays straight (mido: off-beat eighths exactly half a beat)."""
    import mido

    text = BASIC.replace("[harmony]", '[rhythm]\ngroove = "swing"\nswing = 0.66\n\n[harmony]')
    proj = write_project(tmp_path, text)
    out = tmp_path / "out"
    r = run_cli("build", str(proj), "--vary", "groove=swing,latin", "-o", str(out),
                "--formats", "midi,report")
    assert r.exit_code == 0, r.output
    mids = {d.name: next(d.glob("*.mid")) for d in out.iterdir() if d.is_dir()}
    assert set(mids) == {"groove-swing", "groove-latin"}
    for name, expect in (("groove-swing", 0.66), ("groove-latin", 0.5)):
        mf = mido.MidiFile(str(mids[name]))
        t, ons = 0, []
        for msg in mf.tracks[1]:
            t += msg.time
            if msg.type == "note_on" and msg.velocity:
                ons.append(t)
        beat = mf.ticks_per_beat
        offs = [x % beat for x in ons if x % beat]
        assert offs and all(abs(o - expect * beat) <= 1 for o in offs), (name, offs[:4])


def test_combinations_that_draw_alike_share_one_picture(tmp_path: Path) -> None:
    """A swing ratio changes the playback, not the page (swing is written as straight
    eighths, common practice), so combinations that differ only in it draw the same
    picture: ``--vary`` draws each distinct one once.  Judged by the files: every folder's
    preview is byte for byte what a build of that combination alone writes (PNG signature
    and image size from the IHDR chunk, ISO/IEC 15948), the two swing ratios give one
    picture, the two voicings two pictures, and the scores (MusicXML ``<swing>``) differ."""
    import struct

    text = BASIC.replace("[harmony]", '[rhythm]\ngroove = "swing"\nswing = 0.6\n\n[harmony]')
    proj = write_project(tmp_path, text)
    out = tmp_path / "out"
    r = run_cli("build", str(proj), "--vary", "swing=0.6,0.66", "--vary", "voicing=close,drop2",
                "-o", str(out), "--formats", "musicxml,preview")
    assert r.exit_code == 0, r.output
    pngs: dict[tuple[str, str], bytes] = {}
    for swing in ("0.6", "0.66"):
        for voicing in ("close", "drop2"):
            alone = tmp_path / f"alone-{swing}-{voicing}"
            r = run_cli("build", str(proj), "--vary", f"swing={swing}", "--vary", f"voicing={voicing}",
                        "-o", str(alone), "--formats", "musicxml,preview")
            assert r.exit_code == 0, r.output
            (folder,) = [p for p in alone.iterdir() if p.is_dir()]
            varied = out / folder.name
            for ext in ("svg", "png", "musicxml"):
                assert (varied / f"{SLUG}.{ext}").read_bytes() == (folder / f"{SLUG}.{ext}").read_bytes()
            png = (varied / f"{SLUG}.png").read_bytes()
            assert png[:8] == b"\x89PNG\r\n\x1a\n" and png[12:16] == b"IHDR"
            width, height = struct.unpack(">II", png[16:24])
            svg = (varied / f"{SLUG}.svg").read_text()
            head = svg[svg.index("<svg"):svg.index(">", svg.index("<svg"))]
            assert f'width="{width}"' in head and f'height="{height}"' in head
            pngs[(swing, voicing)] = png
    assert pngs[("0.6", "close")] == pngs[("0.66", "close")]
    assert pngs[("0.6", "drop2")] == pngs[("0.66", "drop2")]
    assert pngs[("0.6", "close")] != pngs[("0.6", "drop2")]
    scores = {(out / d.name / f"{SLUG}.musicxml").read_bytes() for d in out.iterdir() if d.is_dir()}
    assert len(scores) == 4
    rows = _rows((out / "variants.md").read_text())
    assert all(row[5].endswith(f"/{SLUG}.png)") for row in rows)
