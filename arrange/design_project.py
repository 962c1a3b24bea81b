"""A starter project (TOML text) around the designer's best motif.

The project builds cleanly: it names the lead range of its section (raised so the voices
under the lead stay in their ranges), tries the sections in order of the line's register
until one builds with no error (the caller's ``errors`` runs the stages in memory), and asks
for a preview.

The framework moves tonic, dominant, tonic.  A transition's project says
``modulate = "by-statement"``: the P statements carry the keys (statement 1 in the first
key, each later P statement moved by its transposition, the last one in the second key,
as the designer guarantees), and the framework, written in the first key, moves with
them, so the cadence falls in the second key.  The framework has as many bars as the
rhythm stage's default groove gives the line in 4/4 (asked of
:func:`arrange.rhythm.lay_rhythm` itself), so the cadence lands on the last bars.
"""
from __future__ import annotations

import json
from collections.abc import Callable

from arrange.chain.core import Chain
from arrange.chain.spec import DesignSpec
from arrange.theory.keys import Key
from arrange.theory.pitch import pitch_name

__all__ = ["project_text", "tonic_symbol", "dominant_symbol"]

_LETTERS = "CDEFGAB"
_NATURAL = {"C": 0, "D": 2, "E": 4, "F": 5, "G": 7, "A": 9, "B": 11}
_ACCIDENTAL = {0: "", 1: "#", 11: "b", 10: "bb"}


def tonic_symbol(key: Key) -> str:
    """The key's tonic triad as a chord symbol (``F``, ``Dm``, ``Bdim``)."""
    s = key.scale
    third, fifth = (s[2] - s[0]) % 12, (s[4] - s[0]) % 12
    quality = {(4, 7): "", (3, 7): "m", (3, 6): "dim", (4, 8): "aug"}[(third, fifth)]
    return key.tonic_name + quality


def dominant_symbol(key: Key) -> str:
    """The dominant seventh on the key's fifth degree, spelled a fifth above the
    tonic's letter (``Ab major`` -> ``Eb7``; common practice)."""
    letter = _LETTERS[(_LETTERS.index(key.tonic_name[0]) + 4) % 7]
    pc = (key.tonic + 7) % 12
    acc = _ACCIDENTAL.get((pc - _NATURAL[letter]) % 12)
    root = letter + acc if acc is not None else pitch_name(60 + pc)[:-1]
    return root + "7"


def _framework(first: str, dominant: str, last: str, bars: int) -> str:
    if bars >= 3:
        return " | ".join([first] * (bars - 2) + [dominant, last])
    if bars == 2:
        return f"{first} {dominant} | {last}"
    return f"{first} {dominant} {last}"


def _statement_keys(chain: Chain, k1: Key, k2: Key) -> tuple[int, list[tuple[int, Key]]]:
    """Bars of the line under the default rhythm in 4/4, as the build will lay it, and the
    key changes of a transition: each P statement after the first moves the first key by its
    transposition, from the bar it starts in (the next bar line if it starts mid-bar); the
    last P statement is in the second key (the designer puts it there)."""
    from arrange.harmony.harmonizer import statement_keys, transpose_key
    from arrange.rhythm.line import lay_rhythm, parse_meter, read_options
    from arrange.tables import Table

    line = lay_rhythm(chain, parse_meter("4/4"), read_options(Table({}, "design [rhythm]")))
    bars = max(1, line.bars)
    if k1 == k2:
        return bars, []
    shifts = list(statement_keys(line, k1))
    changes: list[tuple[int, Key]] = []
    for i, (bar, t) in enumerate(shifts):
        key = k2 if i == len(shifts) - 1 else transpose_key(k1, t)
        if (changes[-1][1] if changes else k1) != key:
            changes.append((bar, key))
    if not changes or changes[-1][1] != k2:      # the last P statement starts in the last bar
        changes.append((bars, k2))
    return bars, changes


def _keyed_framework(k1: Key, k2: Key, bars: int, changes: list[tuple[int, Key]]) -> str:
    """Each bar on the tonic of its key; the last two on the second key's V7 and I."""
    if bars < 3:
        return _framework(tonic_symbol(k1), dominant_symbol(k2), tonic_symbol(k2), bars)
    out = []
    for b in range(1, bars - 1):
        key = k1
        for first, k in changes:
            if first <= b:
                key = k
        out.append(tonic_symbol(key))
    return " | ".join(out + [dominant_symbol(k2), tonic_symbol(k2)])


# sections tried for the written project, by the line's register (the first that builds
# with no error wins; common practice: trumpets or saxes carry a line above middle C,
# trombones one below it)
_HIGH = ("trumpets-4", "saxes-5", "horns-4", "trombones-4")
_LOW = ("trombones-4", "saxes-5", "horns-4", "trumpets-4")


def _lead_range(section: str) -> tuple[int, int]:
    """The lead's practical range, raised so that a close voicing an octave under the
    lead stays inside the lowest part's practical range."""
    from arrange.voicing.sections import get_section

    sec = get_section(section)
    lo, hi = sec.lead.instrument.practical
    floor = max(p.instrument.practical[0] for p in sec.parts[1:]) + 12 if len(sec.parts) > 1 else lo
    low = max(lo, floor)
    return (low, hi) if hi - low >= 12 else (lo, hi)


def project_text(spec: DesignSpec, chain: Chain, why: str,
                 errors: Callable[[str], int | None] | None = None) -> str:
    """The project around ``chain``: the first section (by register) whose build has no
    error, its lead range, a key change into a transition's second key, a preview.
    ``errors`` builds a project text in memory and counts its errors (None: it does not
    build); the command line passes one, so this module stays below the build."""
    lead = sorted(chain.pitches)[len(chain.pitches) // 2]
    order = _HIGH if lead >= 60 else _LOW
    if errors is None:
        return _text(spec, chain, why, order[0])
    best: tuple[int, str] | None = None
    for section in order:
        text = _text(spec, chain, why, section)
        count = errors(text)
        if count == 0:
            return text
        if count is not None and (best is None or count < best[0]):
            best = (count, text)
    return best[1] if best is not None else _text(spec, chain, why, order[0])


def _text(spec: DesignSpec, chain: Chain, why: str, section: str) -> str:
    start_key = spec.from_key or spec.key
    end_key = spec.to_key or start_key
    key_text = str(start_key) if start_key is not None else "C major"
    from arrange.theory.keys import parse_key

    k1 = start_key or parse_key("C major")
    k2 = end_key or k1
    bars, changes = _statement_keys(chain, k1, k2)
    framework = _keyed_framework(k1, k2, bars, changes)
    if spec.from_key is not None and spec.to_key is not None:
        title = f"Transition {spec.from_key} to {spec.to_key}"
    else:
        title = "Designed Line"
    motif = " ".join(pitch_name(p) for p in chain.motif)
    low, high = _lead_range(section)
    q = json.dumps
    harmony = ["[harmony]",
               f"# {bars} bar{'s' if bars != 1 else ''}: what the default groove gives this line in 4/4",
               f"framework = {q(framework)}"]
    if changes:
        harmony += [f"# the P statements carry the keys: each later one moves the key by its "
                    f"transposition; the last one lies in {k2}",
                    "keys = [" + ", ".join(q(f"{k} from bar {b}") for b, k in changes) + "]"]
    return "\n".join([
        "# Written by arrange design around its best motif:",
        f"#   {why}",
        "# Build it with: arrange build THIS_FILE -o out",
        f"title = {q(title)}",
        "tempo = 120",
        'meter = "4/4"',
        f"key = {q(key_text)}",
        "",
        "[chain]",
        f"motif = {q(motif)}",
        f"statements = {spec.statements}",
        f"overlap = {spec.overlap}",
        f"lead_range = [{q(pitch_name(low))}, {q(pitch_name(high))}]   # {section}'s lead, "
        "high enough for the voices under it",
        "",
        *harmony,
        "",
        "[section]",
        f"name = {q(section)}",
        'voicing = "close"',
        "",
        "[output]",
        'formats = ["musicxml", "midi", "report", "preview"]',
        "",
    ])
