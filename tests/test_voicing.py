"""Voicing types, the plan, and the voice-leading search.

References: hand-worked voicings of common practice (4-way close, drop 2, drop 3,
drop 2-4, tension substitutions); music21 ``harmony.ChordSymbol`` for the chord's
pitch classes; brute-force enumeration for the dynamic programme.
"""
from __future__ import annotations

import itertools
import json
from pathlib import Path

import numpy as np
import pytest
from conftest import BASIC, run_cli, write_project

from arrange.theory.chords import parse_chord
from arrange.voicing.shapes import close_under, drop, recipes, shapes, structures
from arrange.voicing.voicer import path_cost, solve

TYPES = ("close", "drop2", "drop2-4", "drop3", "spread", "unison")


# hand-worked examples (common practice): C6 with A4 on top
@pytest.mark.parametrize("vtype, expected", [
    ("close", (69, 67, 64, 60)),      # A4 G4 E4 C4
    ("drop2", (69, 64, 60, 55)),      # A4 E4 C4 G3: G4 an octave lower
    ("drop3", (69, 67, 60, 52)),      # A4 G4 C4 E3: E4 an octave lower
    ("drop2-4", (69, 64, 55, 48)),    # A4 E4 G3 C3: G4 and C4 an octave lower
])
def test_drop_shapes_hand_worked(vtype: str, expected: tuple[int, ...]) -> None:
    close = close_under(69, (0, 4, 7, 9))
    assert close == (69, 67, 64, 60)
    assert drop(close, vtype) == expected


# tension substitutions of common practice, hand-worked under the lead
@pytest.mark.parametrize("symbol, lead, expected", [
    ("Cmaj7", 74, (74, 71, 67, 64)),   # 9 for the root: D5 B4 G4 E4
    ("G7", 76, (76, 71, 67, 65)),      # 13 for the fifth: E5 B4 G4 F4
    ("Cm7", 77, (77, 75, 72, 70)),     # 11 for the fifth: F5 Eb5 C5 Bb4 (the third stays)
    ("C7", 70, (70, 67, 64, 60)),      # chord tones only: Bb4 G4 E4 C4
])
def test_substitutions_hand_worked(symbol: str, lead: int, expected: tuple[int, ...]) -> None:
    found = [s for s, _c in structures(lead, parse_chord(symbol), "close", recipes())]
    assert expected in found
    assert all(s[0] == lead for s in found)


def test_eleven_for_third_is_opt_in() -> None:
    # the house option: the 11 in place of a minor chord's third, only when asked
    cm7 = parse_chord("Cm7")
    plain = [s for s, _c in structures(77, cm7, "close", recipes())]
    assert all(any(p % 12 == 3 for p in s) for s in plain)          # Eb always sounds
    asked = [s for s, _c in structures(77, cm7, "close", recipes(), frozenset({"eleven_for_third"}))]
    assert (77, 72, 70, 67) in asked                                # F5 C5 Bb4 G4


def _build(tmp_path: Path, section: str, voicing: str, extra: str = "", lead_range: str = '["F4", "F5"]',
           statements: int = 6) -> dict:
    text = BASIC.replace('name = "trombones-4"', f'name = "{section}"') \
                .replace('voicing = "close"', f'voicing = "{voicing}"\n{extra}') \
                .replace("statements = 4", f"statements = {statements}\nlead_range = {lead_range}")
    path = write_project(tmp_path, text, f"{section}-{voicing}.toml")
    out = tmp_path / f"out-{section}-{voicing}"
    r = run_cli("build", str(path), "-o", str(out), "--formats", "report")
    assert r.exit_code == 0, r.output
    return json.loads((out / "test-cue.report.json").read_text())


@pytest.mark.parametrize("vtype", TYPES)
def test_lead_on_top_and_exact(tmp_path: Path, vtype: str) -> None:
    rep = _build(tmp_path, "saxes-5", vtype)
    chain = rep["chain"]["pitches"]
    assert [e["lead"] for e in rep["events"]] == chain         # the lead carries the chain as placed
    for e in rep["events"]:
        assert e["pitches"][0] == e["lead"] == max(e["pitches"])   # lead on top (common practice)
        assert e["pitches"] == sorted(e["pitches"], reverse=True)  # no crossing by construction
        assert e["voicing"] == vtype


def test_four_voice_types_by_their_definitions(tmp_path: Path) -> None:
    # common practice: close within an octave; drop 2 = close with voice 2 an octave lower;
    # drop 3 likewise voice 3; drop 2-4 voices 2 and 4
    # (a note the planned type cannot voice inside the trumpets' extreme range takes another
    # type, reported as a "shape" warning; it is checked by the type it took)
    raising = {"close": (), "drop2": (3,), "drop3": (3,), "drop2-4": (2, 3)}
    for planned in raising:
        rep = _build(tmp_path, "trumpets-4", planned, lead_range='["A4", "Bb5"]')
        shaped = {w["event"] for w in rep["warnings"] if w["kind"] == "shape"}
        assert sum(e["voicing"] == planned for e in rep["events"]) > len(rep["events"]) // 2
        for e in rep["events"]:
            assert e["voicing"] == planned or e["index"] in shaped
            vtype = e["voicing"]
            if vtype not in raising:          # a spread (checked by test_spread_...)
                continue
            raised = raising[vtype]
            p = list(e["pitches"])
            back = [q + 12 if i in raised else q for i, q in enumerate(p)]
            close = sorted(back, reverse=True)
            assert close[0] - close[-1] <= 12, (vtype, p)
            where = {"close": [], "drop2": [1], "drop3": [2], "drop2-4": [1, 3]}[vtype]
            assert [close.index(back[i]) for i in raised] == where, (vtype, p)


def test_five_voice_close_doubles_the_lead(tmp_path: Path) -> None:
    from music21 import harmony

    rep = _build(tmp_path, "saxes-5", "close")
    for e in rep["events"]:
        p = e["pitches"]
        assert p[0] - p[3] <= 12                       # 4-way close under the lead
        cs = harmony.ChordSymbol(e["chord"].replace("b", "-", 1) if e["chord"][1:2] == "b" else e["chord"])
        tones = {q.pitchClass for q in cs.pitches}
        lead = p[0] % 12
        b9 = (lead - cs.root().pitchClass) % 12 == 1
        avoid = lead not in tones and any((lead - t) % 12 == 1 for t in tones)
        if b9 or avoid:      # common practice: never a b9 or avoid note at the bottom
            assert p[4] % 12 != lead
        else:
            assert p[4] in (p[0] - 12, p[0] - 24)      # the fifth voice doubles the lead below


def test_every_voice_is_chord_tone_or_tension(tmp_path: Path) -> None:
    from music21 import harmony

    from arrange.writers.symbols import m21_figure

    for section, vtype in (("saxes-5", "close"), ("brass-8", "spread"), ("strings-5", "drop2-4"),
                           ("trumpets-4", "drop3"), ("brass-6", "drop2")):
        rep = _build(tmp_path, section, vtype)
        for e in rep["events"]:
            chord = parse_chord(e["chord"])
            pcs = set(harmony.ChordSymbol(m21_figure(e["chord"])).pitchClasses)   # music21 reference
            allowed = pcs | {(chord.root + t) % 12 for t in chord.tensions}
            for p in e["pitches"]:
                if p % 12 != e["lead"] % 12:      # the lead (and its doubling) is the chain's own note
                    assert p % 12 in allowed, (section, vtype, e["chord"], e["pitches"])


def test_low_register_reports_low_interval_findings(tmp_path: Path) -> None:
    low = _build(tmp_path, "trombones-4", "close", lead_range='["C3", "C4"]')
    kinds = [w for w in low["warnings"] if w["kind"] == "low-interval"]
    assert kinds and all(w["part"] and w["event"] is not None and "bar" in w["message"] for w in kinds)
    kept = _build(tmp_path, "trumpets-4", "close", lead_range='["F4", "F5"]')
    assert not [w for w in kept["warnings"] if w["kind"] == "low-interval"]


def test_by_statement_and_by_bar_plan(tmp_path: Path) -> None:
    rep = _build(tmp_path, "brass-6", "close", extra='by_statement = { 3 = "spread" }\nby_bar = { "1" = "drop2" }')
    for e in rep["events"]:
        bar = int(e["onset"] // 4) + 1
        want = "drop2" if bar == 1 else "spread" if e["statement"] == 3 else "close"
        assert e["voicing"] == want


def test_auto_opens_toward_the_end(tmp_path: Path) -> None:
    rep = _build(tmp_path, "saxes-5", "auto", statements=12)
    ev = rep["events"]
    openness = {"close": 0, "drop2": 1, "drop2-4": 2, "drop3": 1, "spread": 3}
    assert ev[-1]["voicing"] != "close"                 # the end opens up
    climax = max(range(len(ev)), key=lambda i: (ev[i]["lead"], -i))
    assert ev[climax]["voicing"] != "close"             # so does the climax
    assert "close" in {e["voicing"] for e in ev}        # and the rest stays close
    assert openness[ev[-1]["voicing"]] >= openness[ev[0]["voicing"]]


def test_dp_equals_brute_force_on_small_lines() -> None:
    chords = [parse_chord(s) for s in ("F6", "Gm7", "C7", "Fmaj7", "Bb7")]
    leads = [69, 70, 72, 69, 74]
    rng = np.random.default_rng(7)
    for trial in range(6):
        vtype = ("close", "drop2", "spread")[trial % 3]
        cands, costs = [], []
        for ch, lead in zip(chords, leads, strict=True):
            found = shapes(lead, ch, vtype, 6, 36)[:4]
            cands.append(np.array([s for s, _c in found]))
            costs.append(rng.uniform(0, 20, len(found)))
        path, best = solve(cands, costs, 1.0)
        brute = min(path_cost(cands, costs, list(p), 1.0)
                    for p in itertools.product(*(range(len(c)) for c in cands)))
        assert best == pytest.approx(brute)                       # brute-force minimum
        assert path_cost(cands, costs, path, 1.0) == pytest.approx(best)


def _dp_by_numpy(cands: list[np.ndarray], costs: list[np.ndarray], motion: float) -> tuple[list[int], float]:
    """The same dynamic programme priced pair by pair with numpy: every step an ``(a, b)``
    array of motion costs, each candidate's predecessor by ``argmin`` (numpy: the first
    index of the least)."""
    total = costs[0].astype(float)
    back = []
    for i in range(1, len(cands)):
        step = motion * np.abs(cands[i - 1][:, None, 1:] - cands[i][None, :, 1:]).sum(axis=2)
        whole = total[:, None] + step
        arg = whole.argmin(axis=0)
        back.append(arg)
        total = whole[arg, np.arange(len(cands[i]))] + costs[i]
    j = int(total.argmin())
    path = [j]
    for arg in reversed(back):
        j = int(arg[j])
        path.append(j)
    return path[::-1], float(total.min())


def test_dp_takes_numpys_path_ties_included() -> None:
    """The plain-Python search (which prices only predecessors that can still win) picks
    exactly numpy's path, ties broken alike (numpy's ``argmin``: the first index), with the
    same float total: whole-number and repeated costs make many ties."""
    chords = [parse_chord(s) for s in ("F6", "Gm7", "C7", "Fmaj7", "Bb7", "Ebmaj7", "Am7b5", "D7")]
    leads = [69, 70, 72, 69, 74, 70, 72, 66]
    rng = np.random.default_rng(11)
    for trial in range(24):
        vtype = ("close", "drop2", "spread", "drop2-4")[trial % 4]
        cands, costs = [], []
        for ch, lead in zip(chords, leads, strict=True):
            found = shapes(lead, ch, vtype, 5, 36)
            cands.append(np.array([s for s, _c in found]))
            pick = rng.integers(0, 4, len(found)).astype(float) if trial % 2 else rng.uniform(0, 9, len(found))
            costs.append(pick)
        motion = (1.0, 0.5, 0.0, 2.25)[trial % 4]
        rows = [[tuple(int(p) for p in r) for r in c] for c in cands]
        # the line played three times over (the same candidate lists: the steps repeat, and
        # the search keeps a repeated step's motion costs)
        cands, costs, rows = cands * 3, costs * 3, rows * 3
        want = _dp_by_numpy(cands, costs, motion)
        assert solve(rows, [c.tolist() for c in costs], motion) == want


def test_a_weight_below_zero_is_refused(monkeypatch: pytest.MonkeyPatch) -> None:
    """A cost weight below zero would reward what it weighs (common practice: costs count
    against a voicing); the search also relies on motion costing nothing below zero."""
    from arrange.errors import VoicingError
    from arrange.voicing import shapes as shapes_mod

    real = shapes_mod.read_rules

    def tampered(name: str) -> dict:
        d = real(name)
        if name == "voicings.toml":
            d["weights"]["motion"] = -1.0
        return d

    monkeypatch.setattr(shapes_mod, "read_rules", tampered)
    shapes_mod.recipes.cache_clear()
    try:
        with pytest.raises(VoicingError, match="weight motion = -1.0"):
            shapes_mod.recipes()
        with pytest.raises(ValueError, match="below zero"):
            solve([[(60, 50)], [(62, 52)]], [[0.0], [0.0]], -1.0)
    finally:
        monkeypatch.undo()
        shapes_mod.recipes.cache_clear()
