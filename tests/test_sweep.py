"""A generated sweep of hostile values (issue 19) over the tables the other sweeps leave
out: a form's ``[[passages]]`` (melody text, chain, key, transpose, its section plan,
layers, dynamics, harmony), ``[[layers]]``, ``[rhythm_section]``, and the ``[rhythm]``,
``[section]`` and ``[output]`` keys a form reads.  Every key of the table below gets every
hostile value: a digit of another script (Python's ``int`` reads ARABIC-INDIC DIGIT THREE,
Unicode category Nd), a number past Python's 4,300-digit conversion limit (Python docs),
control characters and noncharacters (the Unicode Standard, category Cc, U+FFFE), wrong
types, deep nesting, long text.

Each case runs the CLI in process (conftest's runner) on a small form and must end in exit 0
with its files, or exit 2 with one error line naming the key and saying what is accepted,
the output folder untouched; never exit 1, never a traceback (an exception fails the test).
The count is printed by ``test_the_sweep_has_its_size``.
"""
from __future__ import annotations

import copy
import json
from pathlib import Path

import pytest
from conftest import run_cli, snapshot
from test_hostile import _toml_value

BASE: dict = {
    "title": "Sweep Form",
    "tempo": 132,
    "meter": "4/4",
    "key": "F major",
    "style": "Easy Swing",
    "rhythm": {"groove": "swing", "swing": 0.6},
    "harmony": {"approach": ["chromatic", "dominant"]},
    "section": {"name": "trumpets-4", "voicing": "close"},
    "output": {"formats": ["report"], "dynamics": "mf"},
    "rhythm_section": {"parts": ["bass", "drums"], "bass": "auto"},
    "layers": [{"section": "trombones-4", "role": "pad", "rhythm": "2", "dynamics": "p"}],
    "passages": [
        {"name": "A", "melody": "C5:4 | [F6] A4:4. G4:8 F4:2 | [Gm7] Bb4:4 A4:8 G4:8 [C7] E4:2 |",
         "dynamics": "mf", "voicing": "close"},
        {"name": "B", "key": "Ab major", "chain": {"motif": "Eb5 Db5 C5 Bb4", "statements": 2, "overlap": 2},
         "harmony": {"framework": "Bbm7 Eb7"}, "layers": [1]},
    ],
}

KEYS: list[tuple] = [
    ("tempo",), ("style",), ("title",),
    ("rhythm", "groove"), ("rhythm", "swing"), ("rhythm", "anticipate"), ("rhythm", "articulation"),
    ("rhythm", "notate"),
    ("harmony", "approach"),
    ("section", "voicing"), ("section", "by_statement"), ("section", "by_bar"), ("section", "allow_extreme"),
    ("output", "dynamics"), ("output", "parts"), ("output", "analysis"), ("output", "concert_score"),
    ("output", "humanize"), ("output", "seed"),
    ("rhythm_section", "parts"), ("rhythm_section", "bass"), ("rhythm_section", "bass_instrument"),
    ("rhythm_section", "fills"),
    ("layers", 0, "section"), ("layers", 0, "role"), ("layers", 0, "rhythm"), ("layers", 0, "dynamics"),
    ("passages", 0, "name"), ("passages", 0, "melody"), ("passages", 0, "key"), ("passages", 0, "transpose"),
    ("passages", 0, "voicing"), ("passages", 0, "section"), ("passages", 0, "dynamics"),
    ("passages", 0, "layers"), ("passages", 0, "rhythm"), ("passages", 0, "harmony"),
    ("passages", 1, "chain"), ("passages", 1, "key"), ("passages", 1, "harmony"), ("passages", 1, "layers"),
]
ARABIC_THREE = "\u0663"
VALUES: list[tuple[str, object]] = [
    ("arabic-indic-digit", ARABIC_THREE),
    ("superscript-in-number", "1\u00b2"),
    ("huge-digits", "9" * 5000),
    ("huge-int", 10 ** 40),
    ("negative", -3),
    ("bool", True),
    ("empty-list", []),
    ("table", {"x": 1}),
    ("bell", "a\u0007b"),
    ("nonchar", "a\ufffeb"),
    ("long-text", "x" * 3000),
    ("deep", [[[[[[[[[[1]]]]]]]]]]),
]
CASES = [(k, name, v) for k in KEYS for name, v in VALUES]


def _set(data: dict, path: tuple, value: object) -> dict:
    out = copy.deepcopy(data)
    target = out
    for p in path[:-1]:
        target = target[p]
    target[path[-1]] = value
    return out


def _to_toml(data: dict) -> str:
    lines = [f'"{k}" = {_toml_value(v)}' for k, v in data.items()
             if not isinstance(v, dict) and not (isinstance(v, list) and v and isinstance(v[0], dict))]
    for k, v in data.items():
        if isinstance(v, dict):
            lines.append(f'\n["{k}"]')
            lines += [f'"{kk}" = {_toml_value(vv)}' for kk, vv in v.items()]
    for k, v in data.items():
        if isinstance(v, list) and v and isinstance(v[0], dict):
            for entry in v:
                lines.append(f'\n[["{k}"]]')
                lines += [f'"{kk}" = {_toml_value(vv)}' for kk, vv in entry.items()]
    return "\n".join(lines) + "\n"


def test_the_base_form_builds(tmp_path: Path) -> None:
    p = tmp_path / "p.toml"
    p.write_text(_to_toml(BASE), encoding="utf-8")
    r = run_cli("build", str(p), "-o", str(tmp_path / "out"))
    assert r.exit_code == 0, r.output
    report = json.loads((tmp_path / "out" / "sweep-form.report.json").read_text())
    assert len(report["passages"]) == 2 and report["rhythm_section"]["parts"]


def test_the_sweep_has_its_size() -> None:
    # with test_fuzz.py (its mutations and 150 generated loader cases) and test_hostile.py,
    # the hostile sweep passes the issue's ~400 cases
    print(f"sweep: {len(CASES)} generated cases ({len(KEYS)} keys x {len(VALUES)} values)")
    assert len(CASES) >= 400


@pytest.mark.parametrize(("path", "what", "value"), CASES,
                         ids=[f"{'.'.join(map(str, k))}={n}" for k, n, _v in CASES])
def test_hostile_value(tmp_path: Path, path: tuple, what: str, value: object) -> None:
    out = tmp_path / "out"
    out.mkdir()
    (out / "keep.txt").write_text("a file of the user's")
    before = snapshot(out)
    p = tmp_path / "p.toml"
    p.write_text(_to_toml(_set(BASE, path, value)), encoding="utf-8")
    r = run_cli("build", str(p), "-o", str(out))      # an exception here fails the test (no exit 1)
    assert r.exit_code in (0, 2), (r.exit_code, r.output[-600:])
    assert "Traceback" not in r.output
    if r.exit_code == 0:
        assert len(list(out.glob("*.report.json"))) == 1, r.output
        return
    errors = [ln for ln in r.output.splitlines() if ln.startswith("arrange: error")]
    assert len(errors) == 1, r.output
    line = errors[0]
    assert len(line) <= 400, len(line)
    assert str(path[-1]) in line, line                 # names the key (every value here is valid TOML)
    assert "accepted" in line, line
    assert snapshot(out) == before
