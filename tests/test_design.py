"""The chain designer, end to end through the CLI.

Outside references:
* music21 (``music21.key.Key``) for the pitch classes of a key's scale and of its
  tonic triad, and ``music21.interval`` for the distance between two keys' tonics;
* the RI-chain formulas of common practice (overlap 2: statement 3 lies
  (pn - p1) + (p(n-1) - p2) from statement 1; the last note of statement 2 is
  p(n-1) + pn - p1);
* brute-force counts written plainly below (itertools over every motif).
"""
from __future__ import annotations

import itertools
import json
import math
import tomllib
from pathlib import Path

import pytest
from conftest import run_cli

from arrange.chain.core import build_chain
from arrange.errors import ChainError

# --------------------------------------------------------------- references


def m21_scale(key_text: str) -> set[int]:
    """Pitch classes of a key's scale, from music21 (outside reference)."""
    from music21 import key

    tonic, mode = key_text.split()
    k = key.Key(tonic.replace("b", "-"), mode)
    return {p.pitchClass for p in k.pitches}


def m21_tonic_triad(key_text: str) -> set[int]:
    """Pitch classes of degrees 1, 3 and 5 of the key, from music21."""
    from music21 import key

    tonic, mode = key_text.split()
    k = key.Key(tonic.replace("b", "-"), mode)
    return {k.pitchFromDegree(d).pitchClass for d in (1, 3, 5)}


def m21_distance(from_key: str, to_key: str) -> int:
    """Semitones up from one key's tonic to the other's, mod 12 (music21.interval)."""
    from music21 import interval, pitch

    a = pitch.Pitch(from_key.split()[0].replace("b", "-") + "4")
    b = pitch.Pitch(to_key.split()[0].replace("b", "-") + "4")
    return interval.Interval(a, b).semitones % 12


def design_json(*args: str) -> dict:
    r = run_cli("design", *args, "--json")
    assert r.exit_code == 0, r.output
    return json.loads(r.stdout)


def readme_score(line: list[int]) -> float:
    """The ranking score exactly as README states it, computed here by hand."""
    steps = [abs(b - a) for a, b in zip(line, line[1:], strict=False)]
    smooth = max(0.0, 1 - (sum(steps) / len(steps)) / 12)
    classes = [min(s % 12, 12 - s % 12) for s in steps]
    probs = [classes.count(c) / len(steps) for c in range(7)]
    entropy = -sum(p * math.log(p) for p in probs if p > 0)
    even = entropy / math.log(min(7, len(steps))) if len(steps) > 1 else 0.0
    return round(0.6 * smooth + 0.4 * even, 6)


# --------------------------------------------------------------- every result meets every constraint

CASES = [
    ["--length", "4", "--transposition", "3"],
    ["--length", "4", "--transposition", "5", "--transposition-class", "--no-repeats"],
    ["--length", "4", "--statements", "3", "--compass", "-4", "--max-step", "5"],
    ["--length", "4", "--statements", "6", "--aggregate", "--span", "20"],
    ["--length", "5", "--statements", "5", "--aggregate-within", "16", "--max-step", "6"],
    ["--length", "4", "--key", "F major", "--diatonic", "--start", "F4", "--steps", "1,2,3,4"],
    ["--length", "4", "--key", "D dorian", "--chromatic-notes", "2", "--start", "D4", "--span", "10"],
    ["--length", "4", "--overlap", "3", "--statements", "4", "--start", "G4"],
    ["--length", "5", "--overlap", "3", "--statements", "3", "--max-step", "4", "--transposition", "2"],
    ["--length", "4", "--statements", "4", "--from-key", "F major", "--to-key", "Ab major"],
    ["--length", "4", "--statements", "5", "--from-key", "Bb major", "--to-key", "C major",
     "--steps", "1,2,3,5"],
    ["--length", "3", "--statements", "8", "--from-key", "C major", "--to-key", "Eb major"],
    ["--length", "3", "--statements", "6", "--from-key", "D minor", "--to-key", "E minor"],
]


def _opt(args: list[str], name: str) -> str | None:
    return args[args.index(name) + 1] if name in args else None


@pytest.mark.parametrize("args", CASES, ids=[" ".join(a) for a in CASES])
def test_every_result_rebuilt_meets_every_constraint(args: list[str]) -> None:
    out = design_json(*args, "--top", "25")
    assert set(out) >= {"count", "searched", "results"}
    assert out["results"], "this constraint set has solutions (checked by brute force below)"
    n = int(_opt(args, "--length"))
    k = int(_opt(args, "--statements") or 4)
    o = int(_opt(args, "--overlap") or 2)
    steps_text = _opt(args, "--steps")
    max_step = int(_opt(args, "--max-step") or 12)
    from_key, to_key = _opt(args, "--from-key"), _opt(args, "--to-key")
    from arrange.theory.pitch import parse_pitch
    start = parse_pitch(_opt(args, "--start")) if _opt(args, "--start") else 60
    if from_key and not _opt(args, "--start"):
        from music21 import pitch  # a transition starts on the first key's tonic, octave 4
        start = pitch.Pitch(from_key.split()[0].replace("b", "-") + "4").midi
    previous = None
    for res in out["results"]:
        assert set(res) == {"motif", "names", "chain", "score", "why", "in_range", "travels"}
        motif = res["motif"]
        chain = build_chain(motif, k, o)
        assert res["chain"] == chain.to_json()          # the chain field is arrange chain --json
        line = list(chain.pitches)
        assert len(motif) == n and motif[0] == start
        steps = [b - a for a, b in zip(motif, motif[1:], strict=False)]
        if steps_text:
            sizes = {int(s) for s in steps_text.split(",")}
            assert all(abs(s) in sizes for s in steps)
        assert all(0 < abs(s) <= max_step for s in steps)
        assert all(0 <= p <= 127 for p in line)
        if "--no-repeats" in args:
            assert len({p % 12 for p in motif}) == n
        if (t := _opt(args, "--transposition")) is not None:
            if "--transposition-class" in args:
                assert (chain.transposition - int(t)) % 12 == 0
            else:
                assert chain.transposition == int(t)
        if (c := _opt(args, "--compass")) is not None:
            assert chain.compass_after_two == int(c)
        if (s := _opt(args, "--span")) is not None:
            assert max(line) - min(line) <= int(s)
        if "--aggregate" in args:
            assert len({p % 12 for p in line}) == 12
        if (m := _opt(args, "--aggregate-within")) is not None:
            assert len({p % 12 for p in line[:int(m)]}) == 12
        if (key_text := _opt(args, "--key")) is not None:
            scale = m21_scale(key_text)                   # music21
            outside = sum(1 for p in line if p % 12 not in scale)
            assert outside <= (0 if "--diatonic" in args else int(_opt(args, "--chromatic-notes")))
        if from_key:
            dist = m21_distance(from_key, to_key)         # music21.interval
            # the P statements carry the keys: the last P statement (K, or K-1 when K is even)
            # starts the key distance (music21) from statement 1, mod 12; the line ends on a
            # note of the second key's tonic triad (music21), after the final RI when K is even
            last_p = [st for st in chain.statements if st.form == "P"][-1]
            assert last_p.index == (k if k % 2 else k - 1)
            assert (last_p.pitches[0] - line[0] - dist) % 12 == 0
            assert line[0] % 12 in m21_tonic_triad(from_key)
            assert line[-1] % 12 in m21_tonic_triad(to_key)
            assert out["relaxed"] == []
        # ranking (README): lines within two octaves first, then chains whose statement 3
        # lies at new pitch classes, then the README's score, best first, ties by the lower motif
        assert res["score"] == readme_score(line)
        assert res["in_range"] == (max(line) - min(line) <= 24)
        assert res["travels"] == (chain.transposition % 12 != 0)
        if previous is not None:
            assert _rank(previous) < _rank(res)
        previous = res


def _rank(res: dict) -> tuple:
    return (not res["in_range"], not res["travels"], -res["score"], res["motif"])


# --------------------------------------------------------------- brute-force counts, written plainly

def brute_count(n: int, k: int, o: int, start: int, sizes: range | list[int], check) -> int:
    count = 0
    signed = sorted({s for a in sizes for s in (a, -a)})
    for steps in itertools.product(signed, repeat=n - 1):
        motif = [start]
        for s in steps:
            motif.append(motif[-1] + s)
        try:
            chain = build_chain(motif, k, o)
        except ChainError:
            continue                      # the overlap cannot link this motif
        if min(chain.pitches) < 0 or max(chain.pitches) > 127:
            continue
        if check(motif, chain):
            count += 1
    return count


F_MAJOR = {5, 7, 9, 10, 0, 2, 4}   # F G A Bb C D E (common practice)

BRUTE = [
    (["--length", "3"], 3, 4, 2, lambda m, c: True),
    (["--length", "3", "--statements", "5", "--span", "9"], 3, 5, 2,
     lambda m, c: max(c.pitches) - min(c.pitches) <= 9),
    (["--length", "3", "--no-repeats", "--transposition", "4", "--transposition-class"], 3, 4, 2,
     lambda m, c: len({p % 12 for p in m}) == 3 and c.transposition % 12 == 4),
    (["--length", "4", "--compass", "7"], 4, 4, 2, lambda m, c: c.compass_after_two == 7),
    (["--length", "4", "--statements", "6", "--aggregate"], 4, 6, 2,
     lambda m, c: len({p % 12 for p in c.pitches}) == 12),
    (["--length", "4", "--key", "F major", "--chromatic-notes", "1"], 4, 4, 2,
     lambda m, c: sum(1 for p in c.pitches if p % 12 not in F_MAJOR) <= 1),
    (["--length", "4", "--overlap", "3", "--statements", "5"], 4, 5, 3, lambda m, c: True),
    (["--length", "4", "--overlap", "3", "--statements", "2", "--transposition", "0"], 4, 2, 3,
     lambda m, c: c.transposition == 0),
    (["--length", "4", "--overlap", "1", "--statements", "3", "--transposition", "-6"], 4, 3, 1,
     lambda m, c: c.transposition == -6),
]


@pytest.mark.parametrize("args,n,k,o,check", BRUTE, ids=[" ".join(b[0]) for b in BRUTE])
def test_count_equals_brute_force(args, n, k, o, check) -> None:
    r = run_cli("design", *args, "--count")
    assert r.exit_code == 0, r.output
    assert int(r.stdout.strip()) == brute_count(n, k, o, 60, range(1, 13), check)


# --------------------------------------------------------------- RI formulas (common practice)

def test_transposition_and_compass_formulas_agree_with_the_search() -> None:
    out = design_json("--length", "5", "--max-step", "5", "--top", "40")
    assert len(out["results"]) == 40
    for res in out["results"]:
        p = res["motif"]
        st = res["chain"]["statements"]
        # common practice: statement 3 lies (pn - p1) + (p(n-1) - p2) from statement 1
        t = (p[-1] - p[0]) + (p[-2] - p[1])
        assert res["chain"]["transposition"] == t
        assert st[2]["pitches"] == [q + t for q in p]
        # common practice: the last note of statement 2 is p(n-1) + pn - p1
        assert st[1]["pitches"][-1] == p[-2] + p[-1] - p[0]
        assert res["chain"]["compass_after_two"] == p[-2] + p[-1] - 2 * p[0]


@pytest.mark.parametrize("t", [0, 3, -5, 11])
def test_transposition_count_matches_the_formula(t: int) -> None:
    plain = 0
    for steps in itertools.product([s for s in range(-12, 13) if s], repeat=3):
        p = [60, 60 + steps[0], 60 + steps[0] + steps[1], 60 + sum(steps)]
        if (p[3] - p[0]) + (p[2] - p[1]) == t:      # common practice formula
            plain += 1
    r = run_cli("design", "--length", "4", "--statements", "3", "--transposition", str(t), "--count")
    assert r.exit_code == 0 and int(r.stdout) == plain


# --------------------------------------------------------------- transitions

def test_relaxes_the_end_and_says_so() -> None:
    # C D, overlap 1: line C4 D4 E4 F#4, last statement at +4 (E major); F# lies in E major's
    # scale but not in its tonic triad (music21), so the end is relaxed to the scale
    r = run_cli("design", "--length", "2", "--statements", "3", "--overlap", "1", "--steps", "+2",
                "--from-key", "C major", "--to-key", "E major", "--json")
    assert r.exit_code == 0, r.output
    out = json.loads(r.stdout)
    assert out["count"] == 1 and out["results"][0]["chain"]["pitches"] == [60, 62, 64, 66]
    assert 66 % 12 in m21_scale("E major") and 66 % 12 not in m21_tonic_triad("E major")
    assert len(out["relaxed"]) == 1 and "end" in out["relaxed"][0] and "scale" in out["relaxed"][0]
    assert "relaxed" in r.stderr
    r2 = run_cli("design", "--length", "2", "--statements", "3", "--overlap", "1", "--steps", "+1",
                 "--from-key", "C major", "--to-key", "D major", "--json")
    out2 = json.loads(r2.stdout)
    assert out2["count"] == 1 and "any last note" in out2["relaxed"][0]


def test_relaxed_start_is_reported() -> None:
    out = design_json("--length", "3", "--from-key", "C major", "--to-key", "Eb major", "--start", "D4")
    assert 62 % 12 not in m21_tonic_triad("C major")
    assert any(r.startswith("start") for r in out["relaxed"])
    assert all(res["motif"][0] == 62 for res in out["results"])


def test_write_project_builds_and_moves_between_keys(tmp_path: Path) -> None:
    proj = tmp_path / "cue.toml"
    r = run_cli("design", "--length", "4", "--from-key", "F major", "--to-key", "Ab major",
                "--span", "12", "--json", "--write-project", str(proj))
    assert r.exit_code == 0, r.output
    best = json.loads(r.stdout)["results"][0]
    data = tomllib.loads(proj.read_text(encoding="utf-8"))
    assert data["key"] == "F major"
    # the P statements carry the keys (declared from the bar each starts in); the framework
    # closes on the second key's V7 and I (Eb7 is V7 of Ab, common practice)
    assert data["harmony"]["keys"][-1].startswith("Ab major from bar ")
    bars = [b.split() for b in data["harmony"]["framework"].split("|")]
    chords = [c for bar in bars for c in bar]
    assert chords[0] == "F" and chords[-2:] == ["Eb7", "Ab"]
    out = tmp_path / "out"
    b = run_cli("build", str(proj), "-o", str(out))
    assert b.exit_code == 0, b.output
    report = json.loads(next(out.glob("*.report.json")).read_text(encoding="utf-8"))
    assert report["chain"]["motif"] == best["motif"]
    statements = report["chain"]["statements"]
    last_p = [st for st in statements if st["form"] == "P"][-1]
    assert last_p["index"] == len(statements) - (1 - len(statements) % 2)
    # the key the last P statement starts in is Ab major; the cadence lands at the end: the
    # last lead note sounds over the second key's tonic (a note of its triad, music21)
    bar_of = {e["index"]: e["bar"] for e in report["events"]}
    first_bar = bar_of[last_p["start"]] if last_p["start"] in bar_of else report["bars"]
    keys = [k for k in report["keys"] if k["bar"] <= first_bar + 1]
    assert keys and keys[-1]["key"] == "Ab major"
    events = report["events"]
    assert events[-1]["chord"] == "Ab" and events[0]["chord"] == "F"
    assert events[-1]["lead"] % 12 in m21_tonic_triad("Ab major")
    # never over an existing file
    before = proj.read_bytes()
    again = run_cli("design", "--length", "4", "--write-project", str(proj))
    assert again.exit_code == 2 and "already exists" in again.output
    assert proj.read_bytes() == before


# --------------------------------------------------------------- bad input

BAD = [
    (["--length", "1"], "--length 1 is out of range"),
    (["--length", "9"], "--length 9 is out of range"),
    (["--length", "4", "--overlap", "4"], "--overlap 4"),
    (["--length", "8"], "4,586,471,424"),                                  # 24^7 > 10^9
    (["--length", "4", "--statements", "6", "--aggregate", "--span", "8"], "--span 8 cannot hold all 12"),
    (["--length", "4", "--statements", "6", "--aggregate-within", "11"], "under 12 notes"),
    (["--length", "4", "--statements", "6", "--aggregate-within", "30"], "too few for the aggregate"),
    (["--length", "3", "--statements", "2", "--aggregate"], "only 4 notes"),
    (["--length", "4", "--diatonic"], "need a key"),
    (["--length", "4", "--key", "F major", "--diatonic", "--chromatic-notes", "2"],
     "--diatonic with --chromatic-notes 2"),
    (["--length", "4", "--steps", "14", "--max-step", "12"], "--steps allows"),
    (["--length", "4", "--steps", "12", "--no-repeats"], "--no-repeats"),
    (["--length", "4", "--span", "3", "--steps", "5,7"], "larger than --span 3"),
    (["--length", "4", "--compass", "200"], "--compass 200"),
    (["--length", "4", "--transposition", "90"], "--transposition 90"),
    (["--length", "4", "--transposition-class"], "without --transposition"),
    (["--length", "4", "--from-key", "F major"], "both keys"),
    (["--length", "4", "--statements", "5", "--from-key", "F major", "--to-key", "Ab major"],
     "a multiple of 2"),
    (["--length", "4", "--statements", "6", "--from-key", "F major", "--to-key", "Ab major"],
     "last P statement (5)"),
    (["--length", "4", "--statements", "2", "--from-key", "F major", "--to-key", "Ab major"],
     "--statements 3 or more"),
    (["--length", "4", "--statements", "3", "--transposition", "2", "--from-key", "F major",
      "--to-key", "Ab major"], "--transposition 2"),
    (["--length", "4", "--key", "H major", "--diatonic"], "'H major'"),
    (["--length", "4", "--steps", "1,x"], "'x'"),
    (["--length", "4", "--start", "Q4"], "'Q4'"),
    (["--length", "4", "--top", "0"], "--top 0"),
]


@pytest.mark.parametrize("args,needle", BAD, ids=[" ".join(b[0]) for b in BAD])
def test_bad_input_exits_2_with_a_clear_message(args: list[str], needle: str) -> None:
    r = run_cli("design", *args)
    assert r.exit_code == 2
    assert needle in r.output
    assert "Traceback" not in r.output
    assert "accepted" in r.output
    assert len(r.stderr.strip().splitlines()) == 1


def test_contradictions_name_the_options() -> None:
    r = run_cli("design", "--length", "4", "--statements", "6", "--aggregate", "--span", "8")
    assert "contradictory constraints" in r.output and "--span/--aggregate" in r.output


def test_force_lifts_the_size_limit() -> None:
    from arrange.chain.design import check_space, make_spec

    spec = make_spec(8)
    assert check_space(spec, force=True) == 24 ** 7


# --------------------------------------------------------------- output shape, progress, imports

def test_json_shape_and_text_output() -> None:
    out = design_json("--length", "3", "--top", "2")
    assert out["searched"] == 24 ** 2 and out["count"] == brute_count(3, 4, 2, 60, range(1, 13),
                                                                      lambda m, c: True)
    assert [r["names"] for r in out["results"]] == [
        [n for n in r["chain"]["names"][:3]] for r in out["results"]]
    text = run_cli("design", "--length", "3", "--top", "2")
    assert text.exit_code == 0 and "motifs meet the constraints" in text.stdout
    assert "searching 576 motifs" in text.stderr          # the estimate comes first
    counted = run_cli("design", "--length", "3", "--count", "--json")
    assert json.loads(counted.stdout)["results"] == []


def test_progress_bar_appears_after_a_second(capsys: pytest.CaptureFixture[str]) -> None:
    from arrange.cli import _Progress

    bar = _Progress()
    now = [bar.t0]
    bar.clock = lambda: now[0]
    bar(10, 100)
    assert capsys.readouterr().err == ""          # under a second: nothing
    now[0] += 1.5
    bar(50, 100)
    bar.close()
    err = capsys.readouterr().err
    assert "50%" in err and "50 of 100 motifs" in err


def test_design_keeps_numpy_out_of_chain_and_help() -> None:
    import subprocess
    import sys

    code = ("import sys; from arrange.cli import main; sys.argv=['arrange','design','--help']\n"
            "import contextlib\nwith contextlib.suppress(SystemExit): main()\n"
            "print('numpy' in sys.modules, file=sys.stderr)")
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert r.stderr.strip().splitlines()[-1] == "False"
