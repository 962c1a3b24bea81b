"""Designed transitions: the chain designer finds the motif whose RI chain carries the line
from the passage before into the key of the passage after.

The search (:func:`arrange.chain.design.search`) runs with the transition constraints
of ``arrange design --from-key/--to-key`` on the whole chain: the P statements carry the
keys, so the last P statement lies in the new key (its transposition is the key distance,
mod 12) and the line ends on a note of the new key's tonic chord (relaxed to its scale,
then anywhere, where no chain does), starting on the note of the first key's tonic chord
nearest the last lead note before the transition (never that note itself, and always
within an octave of it).  Of the
ranked motifs, the best whose whole chain lies in the lead instrument's practical range
is taken; the report names it, its score and why, and the runners-up.

The framework (when the passage gives none): the first key's tonic chord, and its
dominant seventh in the last bar, moved with every P statement as ``modulate =
"by-statement"`` moves it, so the last bar is the new key's dominant leading into the
passage after.
"""
from __future__ import annotations

from typing import Any

from arrange.chain.core import Chain, build_chain
from arrange.errors import DesignError
from arrange.harmony.harmonizer import HarmonyOptions
from arrange.theory.keys import Key
from arrange.theory.pitch import pitch_name

__all__ = ["design_transition", "transition_framework", "start_note", "SEARCH_TOP"]

SEARCH_TOP = 200      # ranked motifs looked at for one that fits the lead's range


def start_note(last: int, key: Key) -> int:
    """The note of ``key``'s tonic chord nearest ``last`` (not ``last`` itself; the lower on a tie)."""
    from arrange.chain.spec import tonic_chord

    chord = set(tonic_chord(key))
    options = [p for p in range(last - 11, last + 12) if p % 12 in chord and p != last]
    return min(options, key=lambda p: (abs(p - last), p))


def design_transition(d: Any, last: int, from_key: Key, to_key: Key, section: Any, *,
                      where: str) -> tuple[Chain, tuple[tuple[str, float, str], ...], str]:
    """The chain, (motif, score, why) of the chosen motif and the runners-up, and one line
    saying why."""
    from arrange.chain.design import score_of, search, why
    from arrange.chain.spec import last_p_statement, make_spec

    last_p = last_p_statement(d.statements)
    start = start_note(last, from_key)
    steps = tuple(s for s in range(-d.max_step, d.max_step + 1) if s)
    try:
        spec = make_spec(d.length, statements=d.statements, overlap=d.overlap, start=start, steps=steps,
                         from_key=from_key, to_key=to_key)
    except DesignError as err:
        raise DesignError(err.what, where=f"{where}, key 'chain'", accepted=err.accepted) from None
    found = search(spec, SEARCH_TOP)
    lo, hi = section.lead.instrument.practical
    fitting = []
    for f in found.results:
        chain = build_chain(f.motif, d.statements, d.overlap)
        if lo <= min(chain.pitches) and max(chain.pitches) <= hi:
            fitting.append((f, chain))
    if not fitting:
        raise DesignError(f"no {d.length}-note motif from {pitch_name(start)} with steps up to {d.max_step} "
                          f"carries {d.statements} statements from {from_key} to {to_key} inside the "
                          f"{section.lead.name}'s range {pitch_name(lo)}-{pitch_name(hi)} "
                          f"({found.count} met the key constraints)", where=f"{where}, key 'chain'",
                          accepted="another statements count, length or max_step, or a lead that plays higher "
                                   "or lower")
    # ranked on the whole chain's score (the search ranked by compass and travel first)
    fitting.sort(key=lambda fc: (-score_of(fc[1].pitches)[0], fc[0].motif))
    chosen = fitting[:1 + max(d.candidates, 0)]
    rows = []
    for f, chain in chosen:
        score = score_of(chain.pitches)[0]
        rows.append((" ".join(pitch_name(p) for p in f.motif), score, why(spec, chain)))
    best_chain = chosen[0][1]
    relaxed = f"; relaxed: {'; '.join(found.relaxed)}" if found.relaxed else ""
    about = (f"designed chain {from_key} to {to_key}: motif {rows[0][0]}, chosen of {found.count} motifs "
             f"meeting the transition ({found.searched} searched) as the best-scoring whose chain lies in "
             f"{pitch_name(lo)}-{pitch_name(hi)}; it starts on {pitch_name(start)}, the {from_key} tonic-chord "
             f"note nearest the last lead note {pitch_name(last)}; statement {last_p} (P) lies in {to_key}"
             + relaxed)
    return best_chain, tuple(rows), about


def transition_framework(key: Key, line: Any, approach: tuple[str, ...] | None) -> HarmonyOptions:
    from arrange.design_project import dominant_symbol, tonic_symbol
    from arrange.harmony.approach import TECHNIQUES

    bars = max(1, line.bars)
    tonic, dominant = tonic_symbol(key), dominant_symbol(key)
    framework = tuple((tonic,) for _ in range(bars - 1)) + ((dominant,),) if bars > 1 else \
        ((f"{tonic}:{max(1, len(line.meter.beats) - 1)}", f"{dominant}:1") if len(line.meter.beats) > 1
         else (dominant,),)
    return HarmonyOptions(framework=framework, approach=approach if approach is not None else TECHNIQUES,
                          modulate="by-statement")
