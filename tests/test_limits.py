"""Limits: sizes that would take minutes or gigabytes are refused with the limit
named, before any work starts (issue: hardening).  The limits are ours; the
check is that the refusal is immediate, names the limit, and writes nothing."""
from __future__ import annotations

from pathlib import Path

from conftest import BASIC, run_cli, snapshot, write_project


def _refused(tmp_path: Path, text: str, needle: str) -> str:
    out = tmp_path / "out"
    out.mkdir()
    before = snapshot(out)
    r = run_cli("build", str(write_project(tmp_path, text)), "-o", str(out))
    assert r.exit_code == 2, r.output
    assert needle in r.output and "accepted" in r.output
    assert snapshot(out) == before
    return r.output


def test_a_million_note_chain_is_refused_by_the_chain_command() -> None:
    motif = " ".join(["C4", "D4"] * 500)          # 1000 notes x 1000 statements
    r = run_cli("chain", motif, "--statements", "1000")
    assert r.exit_code == 2
    assert "at most 64 notes" in r.output


def test_the_largest_chain_the_command_allows_answers() -> None:
    motif = " ".join(f"{60 + (i % 12)}" for i in range(64))
    r = run_cli("chain", motif, "--statements", "1000", "--json")
    assert r.exit_code == 0
    assert '"length": 62002' in r.output           # k(n-o)+o = 1000*62+2 (common practice)


def test_a_500_part_section_is_refused(tmp_path: Path) -> None:
    parts = ", ".join(['"trombone"'] * 500)
    text = BASIC.replace('name = "trombones-4"', f'name = "huge"\nparts = [{parts}]')
    _refused(tmp_path, text, "at most 16 parts")


def test_a_passage_too_big_to_write_is_refused(tmp_path: Path) -> None:
    motif = " ".join(["A3", "G3", "C4", "Bb3", "D4", "E4", "F4", "G4", "A3", "C4", "D4", "E4"])
    text = BASIC.replace('"A4 G4 C5 Bb4"', f'"{motif}"').replace("statements = 4", "statements = 1000")
    _refused(tmp_path, text, "written notes")


def test_a_huge_tempo_or_statement_count_is_refused(tmp_path: Path) -> None:
    _refused(tmp_path, BASIC.replace("statements = 4", "statements = 1000000"), "statements")
