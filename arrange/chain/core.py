"""The retrograde-inversion chain (RI chain).

Statement 1 is the motif (form P).  Each next statement is the retrograde
inversion of the one before, inverted about the axis that maps its first
``o`` notes onto the previous statement's last ``o`` notes; those ``o`` notes
are shared and only the rest is appended to the line.  Statements alternate
P, RI, P, RI ...; statement j+2 is statement j transposed.

Transposition of a statement "against the motif":
  * P form: its first pitch minus the motif's first pitch;
  * RI form: its last pitch minus the motif's first pitch (the untransposed
    RI ends on the motif's first note).  This is the "original-centred"
    index of music21's ``serial`` module, which the tests use as reference.

A link of overlap ``o`` exists in pitch space when the previous statement's
tail of ``o`` notes is its own retrograde inversion (t[i] + t[o-1-i] constant).
Where that holds only by pitch class, the link is made by pitch class and the
new notes are placed in the octave nearest the previous note.  Overlaps 1 and
2 always link exactly.
"""
from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

from arrange.errors import ChainError, LimitError
from arrange.theory.pitch import pitch_name

__all__ = [
    "Statement",
    "Chain",
    "build_chain",
    "chain_length",
    "working_overlaps",
    "place_in_range",
    "MAX_STATEMENTS",
    "MAX_NOTES",
]

MAX_STATEMENTS = 1000
MAX_NOTES = 100_000  # a longer line would take minutes downstream


@dataclass(frozen=True, slots=True, eq=False)
class Statement:
    """One statement of a chain: its form (P or RI), transposition, pitches and first note."""
    index: int            # 1-based
    form: str             # "P" or "RI"
    transposition: int    # semitones against the motif (see module doc)
    pitches: tuple[int, ...]
    start: int            # 0-based index of its first note in the merged line
    link: str             # "start", "exact" or "pitch-class"


@dataclass(frozen=True, slots=True, eq=False)
class Chain:
    """A motif grown into a chain of statements, raw and placed (``arrange chain --json``)."""
    motif: tuple[int, ...]
    overlaps: tuple[int, ...]         # one per link (len = statements - 1)
    statements: tuple[Statement, ...]
    raw_pitches: tuple[int, ...]      # exact pitch-space line
    pitches: tuple[int, ...]          # after octave placement
    lead_range: tuple[int, int] | None
    compass_after_two: int
    transposition: int
    aggregate_at: int | None          # 1-based note index completing all 12 pcs

    @property
    def length(self) -> int:
        return len(self.pitches)

    @property
    def span(self) -> tuple[int, int]:
        return (min(self.pitches), max(self.pitches))

    @property
    def pitch_classes(self) -> int:
        return len({p % 12 for p in self.pitches})

    @property
    def names(self) -> tuple[str, ...]:
        return tuple(pitch_name(p) for p in self.pitches)

    def statement_of(self, note_index: int) -> int:
        """1-based statement a line note belongs to (shared notes go to the later one)."""
        found = 1
        for st in self.statements:
            if st.start <= note_index:
                found = st.index
        return found

    def to_json(self) -> dict[str, object]:
        return {
            "motif": list(self.motif),
            "overlaps": list(self.overlaps),
            "statements": [
                {"index": s.index, "form": s.form, "transposition": s.transposition,
                 "pitches": list(s.pitches), "start": s.start, "link": s.link}
                for s in self.statements
            ],
            "raw_pitches": list(self.raw_pitches),
            "pitches": list(self.pitches),
            "names": list(self.names),
            "length": self.length,
            "compass_after_two": self.compass_after_two,
            "transposition": self.transposition,
            "span": list(self.span),
            "pitch_classes": self.pitch_classes,
            "aggregate_at": self.aggregate_at,
            "lead_range": list(self.lead_range) if self.lead_range else None,
        }


def chain_length(motif_length: int, statements: int, overlap: int | Sequence[int]) -> int:
    """Notes in the merged line: the motif, then each link adds its statement minus the
    shared notes, k(n-o)+o for one overlap (a link that shares too many adds none)."""
    links = (overlap,) * max(statements - 1, 0) if isinstance(overlap, int) else tuple(overlap)
    return motif_length + sum(max(motif_length - o, 0) for o in links)


def _link_kind(tail: Sequence[int]) -> str | None:
    """How a statement ending in ``tail`` links to its RI with overlap len(tail)."""
    o = len(tail)
    sums = {tail[i] + tail[o - 1 - i] for i in range(o)}
    if len(sums) == 1:
        return "exact"
    if len({s % 12 for s in sums}) == 1:
        return "pitch-class"
    return None


def _ri_next(prev: Sequence[int], o: int, kind: str) -> tuple[int, ...]:
    """The RI statement that overlaps ``prev`` by ``o`` notes."""
    n = len(prev)
    axis = prev[n - 1] + prev[n - o]           # maps prev[-1] onto prev[n-o] ... exact case
    ri = [axis - prev[n - 1 - i] for i in range(n)]
    if kind == "exact":
        return tuple(ri)
    # pitch-class link: shared notes are the previous statement's pitches;
    # each new note goes to the octave nearest the note before it.
    out = list(prev[n - o:])
    for i in range(o, n):
        pc = ri[i] % 12
        before = out[-1]
        cand = before + ((pc - before) % 12)
        if cand - before > 6:
            cand -= 12
        out.append(cand)
    return tuple(out)


def working_overlaps(motif: Sequence[int]) -> tuple[int, ...]:
    """Overlaps (one value for every link) that chain this motif for any statement count."""
    n = len(motif)
    good = []
    for o in range(1, n):
        if _link_kind(motif[n - o:]) and _link_kind(_ri_tail_of_motif(motif, o)):
            good.append(o)
    return tuple(good)


def _ri_tail_of_motif(motif: Sequence[int], o: int) -> tuple[int, ...]:
    # the tail of any RI form is the inverted retrograde of the motif's head;
    # symmetry does not depend on the axis, so use axis 0.
    return tuple(-motif[o - 1 - i] for i in range(o))


def _check_inputs(motif: Sequence[int], statements: int, overlaps: Sequence[int]) -> None:
    n = len(motif)
    if n < 2:
        raise ChainError(f"the motif has {n} note{'s' if n != 1 else ''}", where="motif",
                         accepted="a motif of at least 2 notes")
    if n > 64:
        raise LimitError(f"the motif has {n} notes", where="motif", accepted="at most 64 notes")
    if not 1 <= statements <= MAX_STATEMENTS:
        raise ChainError(f"statements = {statements}", where="statements",
                         accepted=f"a whole number 1..{MAX_STATEMENTS}")
    for j, o in enumerate(overlaps, start=1):
        if not 1 <= o <= n - 1:
            raise ChainError(f"overlap {o} for link {j}", where="overlap",
                             accepted=f"1..{n - 1} for a motif of {n} notes")


def build_chain(
    motif: Sequence[int],
    statements: int = 4,
    overlap: int | Sequence[int] = 2,
    lead_range: tuple[int, int] | None = None,
) -> Chain:
    """Grow ``motif`` into an RI chain of ``statements`` statements."""
    motif = tuple(int(p) for p in motif)
    links: tuple[int, ...]
    if isinstance(overlap, int):
        links = (overlap,) * max(statements - 1, 0)
        checked: tuple[int, ...] = links or (overlap,)
        spare = overlap
    else:
        links = tuple(int(o) for o in overlap)
        if len(links) != max(statements - 1, 0):
            raise ChainError(
                f"{len(links)} overlaps given for {statements} statements",
                where="overlaps", accepted=f"one overlap per link: {max(statements - 1, 0)} values")
        checked = links
        spare = links[0] if links else 2
    _check_inputs(motif, statements, checked)
    n = len(motif)
    total = chain_length(n, statements, links)
    if total > MAX_NOTES:
        raise LimitError(f"the chain would have {total} notes", where="statements",
                         accepted=f"a chain of at most {MAX_NOTES} notes")

    # build statements, plus two extra virtual ones for the design properties
    stmts: list[Statement] = [Statement(1, "P", 0, motif, 0, "start")]
    line = list(motif)
    virtual_links: list[int] = list(links) + [links[0] if links else spare] * 2
    for j, o in enumerate(virtual_links, start=1):
        prev = stmts[-1]
        kind = _link_kind(prev.pitches[n - o:])
        if kind is None:
            if j > len(links):
                break  # properties only; the asked chain is complete
            ok = working_overlaps(motif)
            raise ChainError(
                f"overlap {o} cannot link statement {j} to statement {j + 1}: the tail "
                f"{' '.join(pitch_name(p) for p in prev.pitches[n - o:])} is not its own "
                f"retrograde inversion, even by pitch class",
                where="overlap",
                accepted="overlaps that work for this motif: " + (", ".join(map(str, ok)) or "none"))
        nxt = _ri_next(prev.pitches, o, kind)
        form = "RI" if prev.form == "P" else "P"
        transposition = (nxt[-1] - motif[0]) if form == "RI" else (nxt[0] - motif[0])
        start = len(line) - o
        st = Statement(j + 1, form, transposition, nxt, start, kind)
        stmts.append(st)
        if j <= len(links):
            line.extend(nxt[o:])
    asked = tuple(stmts[:statements])
    extra = stmts
    compass = extra[1].pitches[-1] - motif[0] if len(extra) > 1 else 0
    transposition = extra[2].pitches[0] - motif[0] if len(extra) > 2 else 0
    raw = tuple(line)
    placed = raw
    if lead_range is not None:
        placed = place_in_range(raw, lead_range)
    aggregate_at = None
    seen: set[int] = set()
    for i, p in enumerate(placed, start=1):
        seen.add(p % 12)
        if len(seen) == 12:
            aggregate_at = i
            break
    return Chain(
        motif=motif,
        overlaps=links,
        statements=asked,
        raw_pitches=raw,
        pitches=placed,
        lead_range=lead_range,
        compass_after_two=compass,
        transposition=transposition,
        aggregate_at=aggregate_at,
    )


def place_in_range(line: Sequence[int], lead_range: tuple[int, int]) -> tuple[int, ...]:
    """Move notes by octaves so the line fits ``lead_range`` (inclusive, concert).

    Keeps every pitch class (only octaves change), keeps shared notes shared
    (the merged line holds each once), and keeps leaps small: a dynamic
    programme over the octave choices minimises the sum of leap sizes, with
    a small preference for each note's written octave.  A line already in
    range is returned unchanged.
    """
    low, high = lead_range
    if low > high:
        low, high = high, low
    if all(low <= p <= high for p in line):
        return tuple(line)
    if high - low < 11:
        missing = sorted({p % 12 for p in line} - {p % 12 for p in range(low, high + 1)})
        if missing:
            raise ChainError(
                f"the lead range {pitch_name(low)}..{pitch_name(high)} cannot hold the pitch "
                f"class{'es' if len(missing) > 1 else ''} "
                f"{', '.join(pitch_name(60 + m)[:-1] for m in missing)} of the line",
                where="lead_range", accepted="a range of at least an octave, or one holding every "
                "pitch class the chain uses")
    cands: list[list[int]] = []
    for p in line:
        c = [q for q in range(low, high + 1) if q % 12 == p % 12]
        cands.append(c)
    # dynamic programme: cost[j] for the j-th candidate of the current note
    inf = float("inf")
    cost: list[float] = [abs(q - line[0]) * 0.01 for q in cands[0]]
    back: list[list[int]] = []
    for i in range(1, len(line)):
        new_cost: list[float] = []
        new_back: list[int] = []
        raw_step = line[i] - line[i - 1]
        for q in cands[i]:
            best, arg = inf, 0
            for j, r in enumerate(cands[i - 1]):
                step = q - r
                # leap size, plus a penalty for reversing the written direction
                total = cost[j] + abs(step) + (3 if step * raw_step < 0 else 0)
                if total < best:
                    best, arg = total, j
            new_cost.append(best + abs(q - line[i]) * 0.01)
            new_back.append(arg)
        cost = new_cost
        back.append(new_back)
    j = min(range(len(cost)), key=lambda k: (cost[k], k))
    out = [cands[-1][j]]
    for i in range(len(line) - 1, 0, -1):
        j = back[i - 1][j]
        out.append(cands[i - 1][j])
    return tuple(reversed(out))
