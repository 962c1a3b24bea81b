"""What goes on the stands: a build's outputs as one set (the parts in their own folder,
replaced as a whole, nothing removed that a build did not write).

Outside references, named beside each check: music21 (``converter.parse``, ``partName``)
reads every written part back; the parts' names and count come from ``report.json``
(the project's own statement), the set of files from the file system.  Faults are
injected from the test side only (``childrun``: a refused rename, ENOSPC).
"""
from __future__ import annotations

import json
import shutil
from pathlib import Path

from childrun import run, tree
from conftest import BASIC, run_cli, write_project

SAXES = BASIC.replace('name = "trombones-4"', 'name = "saxes-5"').replace(
    'motif = "A4 G4 C5 Bb4"', 'motif = "G4 F4 Bb4 Ab4"')
TROMBONES = BASIC.replace('motif = "A4 G4 C5 Bb4"', 'motif = "A3 G3 C4 Bb3"')


def _parts_read_back(folder: Path) -> list[str]:
    """The part name music21 reads in each file of a parts folder, in file order."""
    from music21 import converter

    return [converter.parse(str(p)).parts[0].partName for p in sorted(folder.glob("part*.musicxml"))]


def test_a_rebuild_replaces_the_parts_folder_as_a_whole(tmp_path: Path) -> None:
    """Saxes, then the same project for trombones: the parts folder holds exactly the new
    parts (music21 reads each one's name, as the report lists them), a file someone else
    put there stays, and so does everything beside the folder that the build did not write."""
    out = tmp_path / "out"
    r = run_cli("build", str(write_project(tmp_path, SAXES, "a.toml")), "-o", str(out), "--parts",
                "--formats", "musicxml,report")
    assert r.exit_code == 0, r.output
    folder = out / "test-cue-parts"
    assert _parts_read_back(folder) == [p["name"] for p in
                                        json.loads((out / "test-cue.report.json").read_text())["section"]["parts"]]
    (folder / "my-notes.txt").write_text("bowings for bar 3")        # not ours: it must stay
    (out / "rehearsal-plan.txt").write_text("Tuesday")
    r = run_cli("build", str(write_project(tmp_path, TROMBONES, "b.toml")), "-o", str(out), "--parts",
                "--formats", "musicxml,report")
    assert r.exit_code == 0, r.output
    names = [p["name"] for p in json.loads((out / "test-cue.report.json").read_text())["section"]["parts"]]
    assert names == ["Trombone 1", "Trombone 2", "Trombone 3", "Bass Trombone"]
    assert _parts_read_back(folder) == names                           # no saxophone part survives
    visible = sorted(p.name for p in folder.iterdir() if not p.name.startswith("."))
    assert visible == sorted([p.name for p in folder.glob("part*.musicxml")] + ["my-notes.txt"])
    assert len(visible) == len(names) + 1
    assert (folder / "my-notes.txt").read_text() == "bowings for bar 3"
    assert (out / "rehearsal-plan.txt").read_text() == "Tuesday"
    # a build without parts leaves the parts folder as it is
    before = tree(folder)
    r = run_cli("build", str(tmp_path / "a.toml"), "-o", str(out), "--formats", "musicxml")
    assert r.exit_code == 0, r.output
    assert tree(folder) == before


def test_a_failed_rebuild_keeps_the_old_parts_folder_whole(tmp_path: Path) -> None:
    """A refused rename (a full disk) at every step of the switch: the old parts (and the
    old score) stay as they were, none of the new parts is left beside them."""
    a = write_project(tmp_path, SAXES + '\n[output]\nformats = ["musicxml"]\nparts = true\n', "a.toml")
    b = write_project(tmp_path, TROMBONES + '\n[output]\nformats = ["musicxml"]\nparts = true\n', "b.toml")
    old_dir, probe = tmp_path / "old", tmp_path / "probe"
    assert run(["build", str(a), "-o", str(old_dir)], tmp_path).code == 0
    old = tree(old_dir)
    assert sum(n.startswith("test-cue-parts/part") for n in old) == 5
    shutil.copytree(old_dir, probe)
    child = run(["build", str(b), "-o", str(probe)], tmp_path)
    assert child.code == 0, child.err
    assert sum(n.startswith("test-cue-parts/part") for n in tree(probe)) == 4
    for k in range(1, child.renames + 1):
        target = tmp_path / f"fail{k}"
        shutil.copytree(old_dir, target)
        failed = run(["build", str(b), "-o", str(target)], tmp_path, fail_at=k)
        assert failed.code == 2, (k, failed.err[-400:])
        assert tree(target) == old, (k, sorted(set(tree(target)) ^ set(old)))


def _pdf_text(path: Path) -> tuple[int, list[str], list[tuple[float, float]]]:
    """Pages, each page's text and size in points, as pypdf (a PDF library from the
    registry) reads them."""
    from pypdf import PdfReader

    reader = PdfReader(str(path))
    return (len(reader.pages), [p.extract_text() for p in reader.pages],
            [(float(p.mediabox.width), float(p.mediabox.height)) for p in reader.pages])


def test_print_ready_pdf_of_the_score_and_every_part(tmp_path: Path) -> None:
    """``--pdf``: the score and each part (the rhythm section's too) as PDF pages of A4
    (ISO 216: 210 x 297 mm = 595.3 x 841.9 pt), one page or more each, every page's text
    naming the title, the part and its page number (pypdf reads them)."""
    from conftest import DEMOS

    out = tmp_path / "out"
    r = run_cli("build", str(DEMOS / "night-ferry-soli.toml"), "-o", str(out), "--pdf", "--parts")
    assert r.exit_code == 0, r.output
    report = json.loads((out / "night-ferry-soli.report.json").read_text())
    names = [p["name"] for p in report["section"]["parts"]] + \
        [p["name"] for p in (report.get("rhythm_section") or {}).get("parts", [])]
    assert "Bass" in names and "Drums" in names
    pdfs = sorted((out / "night-ferry-soli-parts").glob("part*.pdf"))
    assert len(pdfs) == len(names) == len(list((out / "night-ferry-soli-parts").glob("part*.musicxml")))
    for path, name in zip(pdfs, names, strict=True):
        pages, texts, sizes = _pdf_text(path)
        assert pages >= 1, path.name
        for n, (text, size) in enumerate(zip(texts, sizes, strict=True), start=1):
            assert name in text and report["title"] in text and f"page {n} of {pages}" in text, (path.name, text)
            assert abs(size[0] - 595.3) < 1 and abs(size[1] - 841.9) < 1, size
    pages, texts, _ = _pdf_text(out / "night-ferry-soli.pdf")
    assert pages >= 1 and "Transposed score" in texts[0] and report["title"] in texts[0]


def test_pdf_on_letter_paper_from_the_project_and_one_file_per_build(tmp_path: Path) -> None:
    """``pdf`` in the project's formats with ``paper = "letter"`` (ANSI letter 8.5 x 11 in =
    612 x 792 pt); no parts asked: the score's PDF and a PDF per part, and the same
    project gives the same PDF bytes."""
    text = TROMBONES + '\n[output]\nformats = ["pdf", "report"]\npaper = "letter"\n'
    proj = write_project(tmp_path, text)
    for d in ("a", "b"):
        r = run_cli("build", str(proj), "-o", str(tmp_path / d))
        assert r.exit_code == 0, r.output
    a, b = tmp_path / "a", tmp_path / "b"
    assert not list(a.glob("*.musicxml")) and not list(a.glob("*-parts/*.musicxml"))
    parts = sorted((a / "test-cue-parts").glob("part*.pdf"))
    assert [p.name for p in parts] == ["part01-trombone-1.pdf", "part02-trombone-2.pdf",
                                       "part03-trombone-3.pdf", "part04-bass-trombone.pdf"]
    for p in [a / "test-cue.pdf", *parts]:
        _pages, _texts, sizes = _pdf_text(p)
        assert all(abs(w - 612) < 1 and abs(h - 792) < 1 for w, h in sizes), (p.name, sizes)
        assert p.read_bytes() == (b / p.relative_to(a)).read_bytes(), p.name


def test_an_unknown_paper_is_refused_in_one_line(tmp_path: Path) -> None:
    proj = write_project(tmp_path, TROMBONES + '\n[output]\nformats = ["pdf"]\npaper = "legal"\n')
    r = run_cli("build", str(proj), "-o", str(tmp_path / "o"))
    assert r.exit_code == 2
    line = r.output.strip().splitlines()[-1]
    assert "paper" in line and "'legal'" in line and "a4" in line and "letter" in line, line
    assert not (tmp_path / "o").exists() or not any((tmp_path / "o").iterdir())
