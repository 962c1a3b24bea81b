"""Hardening: malformed projects through the CLI, and property fuzzing of the loader.

Every malformed project must exit 2 with one message that names the key (or
the file position) and what would be accepted, print no traceback, and leave
the output folder exactly as it was (common practice for command-line tools;
the contract is in DESIGN.md).
"""
from __future__ import annotations

import tomllib
from pathlib import Path

import pytest
from conftest import run_cli, snapshot
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from arrange.errors import ArrangeError
from arrange.project import project_from_data

BASE = {
    "title": "Fuzz Base",
    "tempo": 140,
    "meter": "4/4",
    "key": "F major",
    "chain": {"motif": "A4 G4 C5 Bb4", "statements": 4, "overlap": 2},
    "rhythm": {"groove": "swing", "swing": 0.62, "cell": "8 8 8 8 4 4"},
    "harmony": {"framework": "F6 | F6 | Gm7 C7 | F6"},
    "section": {"name": "trumpets-4", "voicing": "close"},
    "output": {"formats": ["musicxml", "midi", "report"]},
}


def _toml_value(v: object) -> str:
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, (int, float)):
        return repr(v)
    if isinstance(v, str):
        return '"' + v.replace("\\", "\\\\").replace('"', '\\"') + '"'
    if isinstance(v, list):
        return "[" + ", ".join(_toml_value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{ " + ", ".join(f'"{k}" = {_toml_value(x)}' for k, x in v.items()) + " }"
    raise TypeError(v)


def to_toml(data: dict) -> str:
    lines = [f'"{k}" = {_toml_value(v)}' for k, v in data.items() if not isinstance(v, dict)]
    for k, v in data.items():
        if isinstance(v, dict):
            lines.append(f'\n["{k}"]')
            lines += [f'"{kk}" = {_toml_value(vv)}' for kk, vv in v.items()]
    return "\n".join(lines) + "\n"


def _with(path: tuple[str, ...], value: object) -> dict:
    data = {k: (dict(v) if isinstance(v, dict) else v) for k, v in BASE.items()}
    target = data
    for p in path[:-1]:
        target = target.setdefault(p, {})
    if value is _DELETE:
        target.pop(path[-1], None)
    else:
        target[path[-1]] = value
    return data


_DELETE = object()

# (key path, bad value) -> the message must name the key's last part
MUTATIONS: list[tuple[tuple[str, ...], object]] = []
for path, wrong in [
    (("title",), [5, True, [], {"a": 1}, "", "   ", "../../x", "a/b", "x" * 5000]),
    (("tempo",), ["fast", 0, -10, 100000, True, [], 1e308]),
    (("meter",), [44, "", "11/13", "4/0", "0/4", "four", "4/4/4", "99999/4"]),
    (("key",), [1, "", "H major", "F bluesy", "F", "major"]),
    (("chain", "motif"), [5.5, "", "A4 H4", "A4", [], [1000], ["A4", None] if False else ["A4", 3.5],
                          "A4 " * 5000, {"x": 1}]),
    (("chain", "statements"), ["four", 0, -1, 1001, 10 ** 12, 2.5, True]),
    (("chain", "overlap"), ["two", 0, 3, 99, -1, [2, "x", 2], [2], 2.5]),
    (("chain", "lead_range"), ["F4", ["F4"], ["Z4", "D5"], ["D5", "F4"], [1, 2, 3], 7]),
    (("rhythm", "groove"), ["polka", 3, "", ["swing"]]),
    (("rhythm", "swing"), [0.9, 0.2, "hard", True, -1]),
    (("rhythm", "cell"), ["8 q 8", "r8 r4", "", 8, ["8"], "8" * 10, "7"]),
    (("rhythm", "augment"), [[1, 2], "double", [1, 1, "x", 1], [1, 1, 0, 1], [1, 1, 1, 10 ** 9]]),
    (("harmony", "framework"), ["", "F6 | | C7", "Q7", 5, "F6 | Hm7", "F6 | F6 C7 Bb6 A7 G7 D7 E7"]),
    (("section", "name"), ["kazoos-9", "", 3, ["trumpets-4"]]),
    (("section", "voicing"), ["cluster", "", 2]),
    (("output", "formats"), [["tiff"], "musicxml", [], [3]]),
]:
    for value in wrong:
        MUTATIONS.append((path, value))
for path in [("title",), ("chain", "motif"), ("harmony", "framework"), ("section", "name")]:
    MUTATIONS.append((path, _DELETE))
for table, key in [("", "colour"), ("chain", "motiv"), ("rhythm", "swng"), ("harmony", "frame"),
                   ("section", "voicings"), ("output", "format")]:
    MUTATIONS.append(((table, key) if table else (key,), 1))


def _ids() -> list[str]:
    return [f"{'.'.join(p)}={str(v)[:20] if v is not _DELETE else 'missing'}" for p, v in MUTATIONS]


def _assert_refused(tmp_path: Path, text: str | bytes, needles: list[str]) -> None:
    out = tmp_path / "out"
    out.mkdir(exist_ok=True)
    (out / "good.musicxml").write_bytes(b"<score-partwise/>")
    before = snapshot(out)
    proj = tmp_path / "p.toml"
    if isinstance(text, bytes):
        proj.write_bytes(text)
    else:
        proj.write_text(text, encoding="utf-8")
    r = run_cli("build", str(proj), "-o", str(out))
    assert r.exit_code == 2, r.output
    assert "Traceback" not in r.output
    errors = [line for line in r.output.splitlines() if line.startswith("arrange: error:")]
    assert len(errors) == 1, r.output
    assert "accepted" in errors[0] or "line" in errors[0]
    assert any(n in errors[0] for n in needles), r.output
    assert snapshot(out) == before
    assert not any(p.name.endswith(".tmp") for p in out.iterdir())


def test_the_base_project_builds(tmp_path: Path) -> None:
    proj = tmp_path / "base.toml"
    proj.write_text(to_toml(BASE))
    r = run_cli("build", str(proj), "-o", str(tmp_path / "o"))
    assert r.exit_code == 0, r.output


@pytest.mark.parametrize("path, value", MUTATIONS, ids=_ids())
def test_malformed_project_is_refused(tmp_path: Path, path: tuple[str, ...], value: object) -> None:
    text = to_toml(_with(path, value))
    tomllib.loads(text)  # the mutation itself is valid TOML
    _assert_refused(tmp_path, text, [path[-1]])


BROKEN = [
    ('title = "x"\n[chain\nmotif = 1\n', ["line 2"]),
    ('title = "x\n', ["line 1"]),
    ("= 3\n", ["line 1"]),
    ('title = "a"\ntitle = "b"\n', ["line 2"]),
    ("", ["title"]),
    ('title = "x"\n[[chain]]\nmotif = 1\n', ["chain"]),
    (b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR\xff\xfe", ["UTF-8"]),
    (b"\xff\xfe\x00t\x00i", ["UTF-8"]),
    ("title = 1979-05-27\n", ["title"]),
    ("title = \"ok\"\nchain = 3\n", ["chain"]),
]


@pytest.mark.parametrize("text, needles", BROKEN, ids=[f"broken{i}" for i in range(len(BROKEN))])
def test_broken_files_are_refused(tmp_path: Path, text: str | bytes, needles: list[str]) -> None:
    _assert_refused(tmp_path, text, needles)


def test_sweep_is_at_least_a_hundred_projects() -> None:
    assert len(MUTATIONS) + len(BROKEN) >= 100


_scalars = st.one_of(st.none(), st.booleans(), st.integers(-10 ** 6, 10 ** 6),
                     st.floats(allow_nan=True), st.text(max_size=20))
_values = st.recursive(_scalars, lambda inner: st.one_of(
    st.lists(inner, max_size=4), st.dictionaries(st.text(max_size=8), inner, max_size=4)), max_leaves=8)


@settings(max_examples=150, suppress_health_check=[HealthCheck.too_slow], deadline=None)
@given(st.sampled_from([p for p, _ in MUTATIONS]), _values)
def test_loader_gives_project_or_arrange_error(path: tuple[str, ...], value: object) -> None:
    data = _with(path, None if value is None else value)
    if value is None:
        data = _with(path, _DELETE)
    try:
        project_from_data(data, "fuzz.toml")
    except ArrangeError as err:
        assert str(err)
