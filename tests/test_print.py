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
