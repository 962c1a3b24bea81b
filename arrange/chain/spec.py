"""The chain designer's constraints: one checked :class:`DesignSpec`.

:func:`make_spec` refuses values out of range and constraint sets that no
motif can meet (saying which constraints contradict each other), before any
search starts.  Plain Python: no numpy here, so the CLI can check input cheaply.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

from arrange.checked import signed
from arrange.errors import DesignError
from arrange.theory.keys import Key
from arrange.theory.pitch import pitch_name

__all__ = ["DesignSpec", "make_spec", "parse_steps", "tonic_chord", "chain_length", "last_p_statement",
           "LENGTHS", "MAX_STATEMENTS", "MAX_STEP", "MAX_SPACE"]

LENGTHS = (2, 8)
MAX_STATEMENTS = 64     # a longer chain adds nothing a search can rank
MAX_STEP = 24           # two octaves either way
MAX_SPACE = 10 ** 9     # candidates searched without --force
LEAD_SPAN = 24          # a section lead's working compass, two octaves (common practice, from memory)


def tonic_chord(key: Key) -> tuple[int, int, int]:
    """Pitch classes of the key's tonic triad (scale degrees 1, 3, 5)."""
    s = key.scale
    return (s[0], s[2], s[4])


def _pcs(pcs: tuple[int, ...]) -> str:
    return " ".join(pitch_name(60 + p)[:-1] for p in pcs)


@dataclass(frozen=True, slots=True, eq=False)
class DesignSpec:
    length: int
    statements: int
    overlap: int
    start: int
    steps: tuple[int, ...]               # allowed signed steps, ascending
    no_repeats: bool = False
    transposition: int | None = None
    transposition_class: bool = False
    compass: int | None = None
    span: int | None = None
    aggregate_within: int | None = None  # --aggregate: the chain's whole length
    key: Key | None = None
    chromatic_notes: int | None = None   # --diatonic: 0
    from_key: Key | None = None
    to_key: Key | None = None
    relaxed_start: str | None = None     # why the start note could not be a tonic-chord note
    lead_span: int = LEAD_SPAN           # ranking: lines within this compass rank first

    @property
    def distance(self) -> int:
        if self.from_key is None or self.to_key is None:
            return 0
        return (self.to_key.tonic - self.from_key.tonic) % 12

    def key_notes(self) -> frozenset[int]:
        """Pitch classes counted as inside: the key, or both keys of a transition."""
        if self.key is not None:
            return frozenset(self.key.scale)
        if self.from_key is not None and self.to_key is not None:
            return frozenset(self.from_key.scale) | frozenset(self.to_key.scale)
        return frozenset(range(12))

    def key_label(self) -> str:
        if self.key is not None:
            return str(self.key)
        return f"{self.from_key} and {self.to_key}"


def last_p_statement(statements: int) -> int:
    """The last P-form statement of a chain of ``statements`` (odd statements are P)."""
    return statements if statements % 2 else statements - 1


def chain_length(spec: DesignSpec) -> int:
    n = spec.length
    return n + (spec.statements - 1) * (n - spec.overlap)


def parse_steps(text: str, *, where: str = "--steps") -> tuple[int, ...]:
    """``"1,2,5"`` allows 1, 2 and 5 semitones up or down; a sign (``+3``, ``-4``)
    allows that direction only; ``0`` allows a repeated note."""
    out: set[int] = set()
    tokens = [t for t in text.replace(" ", ",").split(",") if t]
    if not tokens:
        raise DesignError(f"{text!r} holds no step", where=where,
                          accepted="step sizes in semitones separated by commas, e.g. 1,2,5 or +3,-4")
    for i, tok in enumerate(tokens, start=1):
        if signed(tok) is None or abs(int(tok)) > MAX_STEP:
            raise DesignError(f"{tok[:40]!r} (step {i} of {where}) is not a step size", where=where,
                              accepted=f"whole numbers of semitones -{MAX_STEP}..{MAX_STEP} separated "
                              "by commas, e.g. 1,2,5 or +3,-4")
        v = int(tok)
        out.add(v)
        if tok[0] not in "+-":
            out.add(-v)
    return tuple(sorted(out))


def _range(value: int, low: int, high: int, option: str, what: str) -> None:
    if not low <= value <= high:
        raise DesignError(f"{option} {value} is out of range", where=option,
                          accepted=f"{what} {low}..{high}")


def _contradict(what: str, options: str, accepted: str) -> DesignError:
    return DesignError(f"contradictory constraints: {what}", where=options, accepted=accepted)


def make_spec(length: int, *, statements: int = 4, overlap: int = 2, start: int | None = None,
              max_step: int | None = None, steps: tuple[int, ...] | None = None,
              no_repeats: bool = False, transposition: int | None = None,
              transposition_class: bool = False, compass: int | None = None,
              span: int | None = None, aggregate: bool = False,
              aggregate_within: int | None = None, key: Key | None = None,
              diatonic: bool = False, chromatic_notes: int | None = None,
              from_key: Key | None = None, to_key: Key | None = None) -> DesignSpec:
    """Check every value and every pair of constraints; the :class:`DesignSpec`."""
    _range(length, *LENGTHS, "--length", "a motif length of")
    _range(statements, 1, MAX_STATEMENTS, "--statements", "a statement count of")
    _range(overlap, 1, length - 1, "--overlap", f"for a motif of {length} notes, an overlap of")
    if max_step is not None:
        _range(max_step, 1, MAX_STEP, "--max-step", "a largest step in semitones of")
    if steps is None:
        m = 12 if max_step is None else max_step
        steps = tuple(s for s in range(-m, m + 1) if s)
    elif max_step is not None and any(abs(s) > max_step for s in steps):
        wide = max(steps, key=abs)
        raise _contradict(f"--steps allows {wide:+d} but --max-step is {max_step}", "--steps/--max-step",
                          "steps no larger than --max-step, or one of the two options")
    steps = tuple(sorted(set(steps)))
    if (from_key is None) != (to_key is None):
        raise DesignError("a transition needs both keys", where="--from-key/--to-key",
                          accepted='both, e.g. --from-key "F major" --to-key "Ab major"')
    relaxed_start = None
    if start is None:
        start = 60 + (from_key.tonic if from_key is not None else 0)
    elif from_key is not None and start % 12 not in tonic_chord(from_key):
        relaxed_start = (f"start: {pitch_name(start)} (--start) is not a note of the {from_key} tonic "
                         f"chord ({_pcs(tonic_chord(from_key))}); kept as asked")
    _range(start, 0, 127, "--start", "a MIDI note")
    if transposition_class and transposition is None:
        raise DesignError("--transposition-class without --transposition", where="--transposition-class",
                          accepted="--transposition T --transposition-class")
    if span is not None:
        _range(span, 0, 127, "--span", "a span in semitones of")
        smallest = min(abs(s) for s in steps)
        if smallest > span:
            raise _contradict(f"every allowed step is larger than --span {span} (smallest {smallest})",
                              "--span/--steps/--max-step", "a span at least as large as the smallest step")
    total = length + (statements - 1) * (length - overlap)
    if aggregate_within is not None and aggregate_within < 12:
        raise DesignError(f"--aggregate-within {aggregate_within} is under 12 notes",
                          where="--aggregate-within", accepted="12 notes or more")
    if aggregate and aggregate_within is None:
        aggregate_within = total
    if aggregate_within is not None:
        if aggregate_within > total or total < 12:
            within = "" if aggregate else f" within {aggregate_within}"
            raise _contradict(f"the chain has only {total} notes ({statements} statements, overlap "
                              f"{overlap}), too few for the aggregate{within}",
                              "--aggregate/--statements/--overlap",
                              "more statements or a smaller overlap"
                              + (f", or --aggregate-within 12..{total}" if total >= 12 else ""))
        if span is not None and span < 11:
            raise _contradict(f"--span {span} cannot hold all 12 pitch classes", "--span/--aggregate",
                              "a span of 11 or more with --aggregate")
    if diatonic and chromatic_notes not in (None, 0):
        raise _contradict(f"--diatonic with --chromatic-notes {chromatic_notes}",
                          "--diatonic/--chromatic-notes", "one of the two")
    if diatonic:
        chromatic_notes = 0
    if chromatic_notes is not None:
        _range(chromatic_notes, 0, 10_000, "--chromatic-notes", "a note count of")
        if key is None and from_key is None:
            raise DesignError("--diatonic and --chromatic-notes need a key", where="--key",
                              accepted='--key "F major" (or a transition: --from-key/--to-key)')
    if no_repeats and all(s % 12 == 0 for s in steps):
        raise _contradict("--no-repeats, but every allowed step keeps the pitch class",
                          "--no-repeats/--steps", "steps that are not 0 or whole octaves")
    if from_key is not None and to_key is not None:
        if statements < 3:
            raise _contradict("a transition needs a P statement after the first (statement 3) to "
                              "carry the second key", "--statements/--from-key",
                              "--statements 3 or more")
        dist = (to_key.tonic - from_key.tonic) % 12
        # the P statements carry the keys: statement 2j+1 lies j times the statement-3
        # transposition from statement 1 (statement j+2 is statement j transposed), so the
        # last P statement reaches only multiples of gcd(j, 12)
        last_p = last_p_statement(statements)
        g = math.gcd((last_p - 1) // 2, 12)
        if dist % g:
            raise _contradict(f"with --statements {statements} the last P statement ({last_p}) lies "
                              f"{(last_p - 1) // 2} times the statement-3 transposition from "
                              f"statement 1, a multiple of {g} semitones (mod 12), but {from_key} to "
                              f"{to_key} is {dist}", "--statements/--from-key/--to-key",
                              "a --statements whose last P statement (K, or K-1 when K is even) "
                              "lies (P-1)/2 transpositions away, a number that divides into the "
                              "key distance (3 or 4 statements always do)")
        if last_p == 3 and transposition is not None and (transposition - dist) % 12:
            raise _contradict(f"--transposition {transposition} puts statement 3 {transposition % 12} "
                              f"semitones (mod 12) from statement 1, but {from_key} to {to_key} needs "
                              f"{dist}", "--transposition/--from-key/--to-key",
                              f"--transposition {dist} (mod 12) or another --statements")
    if overlap <= 2:
        # exact links (common practice): compass = pn + p(n-o+1) - 2 p1 and
        # transposition = (pn - p1) + (p(n-o+1) - po); bound each by the largest step
        big = max(abs(s) for s in steps)
        c_max = (2 * length - 1 - overlap) * big
        t_max = (length - 1 + abs(length + 1 - 2 * overlap)) * big
        if compass is not None and abs(compass) > c_max:
            raise _contradict(f"--compass {compass} is beyond the {c_max} semitones that {length}-note "
                              f"motifs with steps up to {big} can reach", "--compass/--length/--max-step",
                              f"a compass within -{c_max}..{c_max}")
        if transposition is not None and not transposition_class and abs(transposition) > t_max:
            raise _contradict(f"--transposition {transposition} is beyond the {t_max} semitones that "
                              f"{length}-note motifs with steps up to {big} can reach",
                              "--transposition/--length/--max-step",
                              f"a transposition within -{t_max}..{t_max}, or --transposition-class")
    return DesignSpec(length, statements, overlap, start, steps, no_repeats, transposition,
                      transposition_class, compass, span, aggregate_within, key, chromatic_notes,
                      from_key, to_key, relaxed_start)
