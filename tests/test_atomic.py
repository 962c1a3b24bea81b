"""Writes atomic as a set (issue 19): at every instant each output name holds its
complete old file or its complete new file; a failed or interrupted build leaves the
old set whole and, by the next build at the latest, no temporary file; two builds into
one folder run one after the other; ``--vary`` is all or nothing; Ctrl-C and SIGTERM
exit 130 and 143 (the shell convention 128 + signal number, POSIX signal numbers
SIGINT 2, SIGTERM 15) with one line.

Faults are injected from the test side only (``childrun``): the child's ``os.replace``
and ``os.rename`` are wrapped to SIGKILL the process, raise ENOSPC (a full disk),
or sleep, at the N-th rename.
"""
from __future__ import annotations

import shutil
import signal
import time
from pathlib import Path

import pytest
from childrun import finish, run, start, tree

PROJECT = '''title = "Atomic Cue"
tempo = {tempo}
meter = "4/4"
key = "F major"

[chain]
motif = "A3 G3 C4 Bb3"
statements = 3
overlap = 2

[harmony]
framework = "F6 | Gm7 C7"

[section]
name = "trombones-4"
voicing = "close"

[output]
formats = {formats}
'''
FORMATS = '["musicxml", "midi", "report"]'


def _project(folder: Path, tempo: int, formats: str = FORMATS, name: str = "p.toml") -> Path:
    path = folder / name
    path.write_text(PROJECT.format(tempo=tempo, formats=formats), encoding="utf-8")
    return path


@pytest.fixture(scope="module")
def sets(tmp_path_factory: pytest.TempPathFactory) -> dict[str, object]:
    """The old set (tempo 100) and the new set (tempo 132) of one project, and how many
    renames a build of the new one over the old one makes."""
    tmp = tmp_path_factory.mktemp("sets")
    old_p, new_p = _project(tmp, 100, name="old.toml"), _project(tmp, 132, name="new.toml")
    for p, out in ((old_p, "old"), (new_p, "new")):
        child = run(["build", str(p), "-o", str(tmp / out)], tmp)
        assert child.code == 0, child.err
    old, new = tree(tmp / "old"), tree(tmp / "new")
    assert set(old) == set(new) and len(old) == 4
    assert all(old[n] != new[n] for n in old)        # every file changes with the tempo
    shutil.copytree(tmp / "old", tmp / "probe")
    child = run(["build", str(new_p), "-o", str(tmp / "probe")], tmp)
    assert child.code == 0 and tree(tmp / "probe") == new
    assert child.renames >= len(new)
    return {"tmp": tmp, "old": old, "new": new, "new_p": new_p, "old_p": old_p,
            "renames": child.renames}


def _each_name_old_or_new(folder: Path, old: dict[str, bytes], new: dict[str, bytes]) -> list[str]:
    """Every output name holds a complete old or new file; returns the other names."""
    now = tree(folder)
    for name in old:
        assert name in now, f"{name} is missing"
        assert now[name] in (old[name], new[name]), f"{name} holds neither the old nor the new file"
    return [n for n in now if n not in old]


def test_a_build_killed_at_every_rename_loses_no_file(sets: dict) -> None:
    tmp, old, new = sets["tmp"], sets["old"], sets["new"]
    total = sets["renames"]
    for k in range(1, total + 1):
        out = tmp / f"kill{k}"
        shutil.copytree(tmp / "old", out)
        child = run(["build", str(sets["new_p"]), "-o", str(out)], tmp, kill_at=k)
        assert child.code == -signal.SIGKILL, (k, child.code, child.err[-400:])
        extra = _each_name_old_or_new(out, old, new)
        assert all(n.startswith(".") for n in extra), (k, extra)   # only hidden temporary names
        # the next build finishes the job and clears the temporary files of the killed one
        child = run(["build", str(sets["new_p"]), "-o", str(out)], tmp)
        assert child.code == 0, child.err
        assert tree(out) == new, (k, sorted(tree(out)))


def test_a_refused_rename_leaves_the_old_set_whole_and_no_temp(sets: dict) -> None:
    tmp, old = sets["tmp"], sets["old"]
    for k in range(1, sets["renames"] + 1):
        out = tmp / f"full{k}"
        shutil.copytree(tmp / "old", out)
        child = run(["build", str(sets["new_p"]), "-o", str(out)], tmp, fail_at=k)
        assert child.code == 2, (k, child.code, child.err[-400:])
        lines = child.error_lines()
        assert len(lines) == 1 and "No space left" in lines[0], child.err
        assert tree(out) == old, (k, sorted(tree(out)))


def test_a_refused_rename_into_an_empty_folder_leaves_it_empty(sets: dict) -> None:
    tmp = sets["tmp"]
    for k in (1, 3):
        out = tmp / f"empty{k}"
        out.mkdir()
        child = run(["build", str(sets["new_p"]), "-o", str(out)], tmp, fail_at=k)
        assert child.code == 2, child.err
        assert tree(out) == {}, sorted(tree(out))


def test_two_builds_into_one_folder_never_mix(sets: dict) -> None:
    """A slow build A and a build B started while A renames: the folder ends as one
    whole set (B's: it ran after A, or A's if B said the folder was busy)."""
    tmp, new = sets["tmp"], sets["new"]
    out = tmp / "twice"
    shutil.copytree(tmp / "old", out)
    mark = tmp / "twice.mark"
    t0 = time.monotonic()
    proc_a, rep_a = start(["build", str(sets["new_p"]), "-o", str(out)], tmp, slow=0.4, mark=mark)
    while not mark.exists() and proc_a.poll() is None:
        time.sleep(0.02)
    third = _project(tmp, 90, name="third.toml")
    b = run(["build", str(third), "-o", str(out)], tmp, timeout=120)
    a = finish(proc_a, rep_a, t0, timeout=120)
    assert a.code == 0, a.err
    assert b.code in (0, 2), b.err
    now = tree(out)
    if b.code == 0:
        ref = tmp / "third-ref"
        assert run(["build", str(third), "-o", str(ref)], tmp).code == 0
        assert now == tree(ref), "the folder mixes two builds"
    else:
        assert len(b.error_lines()) == 1 and "another build" in b.error_lines()[0], b.err
        assert now == new


def test_a_failing_build_does_not_undo_another_builds_files(sets: dict) -> None:
    """B fails (a full disk) while A is writing: B's roll-back must not delete A's files."""
    tmp, new = sets["tmp"], sets["new"]
    out = tmp / "undo"
    shutil.copytree(tmp / "old", out)
    mark = tmp / "undo.mark"
    t0 = time.monotonic()
    proc_a, rep_a = start(["build", str(sets["new_p"]), "-o", str(out)], tmp, slow=0.4, mark=mark)
    while not mark.exists() and proc_a.poll() is None:
        time.sleep(0.02)
    b = run(["build", str(_project(tmp, 90, name="undo-b.toml")), "-o", str(out)], tmp,
            fail_at=2, timeout=120)
    a = finish(proc_a, rep_a, t0, timeout=120)
    assert a.code == 0 and b.code == 2, (a.err, b.err)
    assert tree(out) == new, sorted(tree(out))


def test_a_failing_vary_is_all_or_nothing(tmp_path: Path) -> None:
    old_p = _project(tmp_path, 100, formats='["report"]', name="old.toml")
    new_p = _project(tmp_path, 132, formats='["report"]', name="new.toml")
    vary = ["--vary", "voicing=close,drop2"]
    out = tmp_path / "out"
    assert run(["build", str(old_p), "-o", str(out), *vary], tmp_path).code == 0
    old = tree(out)
    assert "variants.md" in old and len(old) == 5
    probe = tmp_path / "probe"
    shutil.copytree(out, probe)
    child = run(["build", str(new_p), "-o", str(probe), *vary], tmp_path)
    assert child.code == 0
    new = tree(probe)
    assert set(new) == set(old) and all(new[n] != old[n] for n in old if n.endswith(".json"))
    for k in range(1, child.renames + 1):
        target = tmp_path / f"v{k}"
        shutil.copytree(out, target)
        failed = run(["build", str(new_p), "-o", str(target), *vary], tmp_path, fail_at=k)
        assert failed.code == 2, (k, failed.err[-400:])
        assert tree(target) == old, (k, sorted(tree(target)))


@pytest.mark.parametrize("sig, code", [(signal.SIGINT, 130), (signal.SIGTERM, 143)],
                         ids=["ctrl-c", "sigterm"])
def test_an_interrupted_build_exits_128_plus_signal_in_one_line(sets: dict, sig: int, code: int) -> None:
    tmp, old, new = sets["tmp"], sets["old"], sets["new"]
    out = tmp / f"sig{sig}"
    shutil.copytree(tmp / "old", out)
    mark = tmp / f"sig{sig}.mark"
    t0 = time.monotonic()
    proc, rep = start(["build", str(sets["new_p"]), "-o", str(out)], tmp, slow=1.0, mark=mark)
    while not mark.exists() and proc.poll() is None:
        time.sleep(0.02)
    time.sleep(0.3)
    proc.send_signal(sig)
    child = finish(proc, rep, t0, timeout=60)
    assert child.code == code, (child.code, child.err[-600:])
    assert "Traceback" not in child.err and "Aborted" not in child.err
    lines = child.error_lines()
    assert len(lines) == 1 and "interrupted" in lines[0], child.err
    assert _each_name_old_or_new(out, old, new) == []       # nothing lost, no temporary file
