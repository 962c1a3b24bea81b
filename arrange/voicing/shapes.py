"""Voicing shapes: the candidate voicings of one lead note over one chord.

The recipes (four-note chord forms, tension substitutions, doublings, search
limits, cost weights, the auto plan) come from ``voicing_rules/voicings.toml``.
Every candidate holds the lead on top, exactly as placed, and one sounding pitch
per part, top to bottom.  Shapes of common practice:

* ``close``: the four-note form packed within the octave under the lead;
  with five voices the lead doubled an octave below, further voices doubled
  by the doubling rule below that;
* ``drop2`` / ``drop3`` / ``drop2-4``: the close shape with the second, the
  third, or the second and fourth voice from the top an octave lower;
* ``spread``: the open drop 2-4 (or drop 2) shape above, the root (or, with four voices,
  the root or a guide tone) at the bottom;
* ``unison``: every part on the lead's pitch class, in unison or octaves.
"""
from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache
from itertools import combinations, combinations_with_replacement

from arrange.errors import VoicingError
from arrange.theory.chords import Chord
from arrange.voicing.sections import read_rules

__all__ = ["VOICINGS", "Recipes", "recipes", "four_note_form", "chord_forms", "close_under",
           "drop", "structures", "shapes", "fifth_pc", "guide_tones", "GUIDE_OPTIONS", "doublings"]

VOICINGS = ("close", "drop2", "drop2-4", "drop3", "spread", "unison")
CLOSED = ("close", "drop2", "drop2-4", "drop3")
_ON = ("any", "dominant", "minor")


@dataclass(frozen=True, slots=True, eq=False)
class Recipes:
    """``voicing_rules/voicings.toml``: forms, substitutions, doubling, search weights."""
    forms: tuple[tuple[str, tuple[int, ...]], ...]
    # (tension, replaces, on, option): option "" is always on; any other names a voicing
    # option the project must ask for (a tension in place of a guide tone)
    substitutions: tuple[tuple[int, int, str, str], ...]
    doubling: tuple[tuple[str, float], ...]
    max_candidates: int
    extra_window: int
    weights: tuple[tuple[str, float], ...]
    auto_reach: float
    auto_steps: tuple[tuple[float, str], ...]

    def form(self, quality: str) -> tuple[int, ...] | None:
        return _tables(self)[0].get(quality)

    def weight(self, name: str) -> float:
        return _tables(self)[1][name]


@lru_cache(maxsize=8)
def _tables(rec: Recipes) -> tuple[dict[str, tuple[int, ...]], dict[str, float]]:
    """A recipe's forms and weights as dicts, made once (the search asks for them often)."""
    return dict(rec.forms), dict(rec.weights)


# the voicing options a substitution may name (``[section]`` keys of the same name)
GUIDE_OPTIONS = ("eleven_for_third",)


@lru_cache(maxsize=1)
def recipes() -> Recipes:
    where = "voicing_rules/voicings.toml"
    d = read_rules("voicings.toml")
    try:
        forms = tuple((q, tuple(int(i) % 12 for i in iv)) for q, iv in d["forms"].items())
        subs = tuple((int(s["tension"]) % 12, int(s["replaces"]) % 12, str(s["on"]), str(s.get("option", "")))
                     for s in d["substitutions"])
        doubling = tuple((k, float(v)) for k, v in d["doubling"].items())
        search = d["search"]
        weights = tuple((k, float(v)) for k, v in d["weights"].items())
        auto = d["auto"]
        steps = tuple((float(a), str(b)) for a, b in auto["steps"])
        rec = Recipes(forms, subs, doubling, int(search["max_candidates"]),
                      int(search["extra_window"]), weights, float(auto["reach"]), steps)
    except (KeyError, TypeError, ValueError) as err:
        raise VoicingError(f"the recipe table is broken ({err!r})", where=where,
                           accepted="tables forms, substitutions, doubling, search, weights, auto") from None
    for k, v in rec.weights:
        if not v >= 0:      # a cost below zero would reward what it weighs (and the search relies on it)
            raise VoicingError(f"weight {k} = {v}", where=f"{where} [weights]", accepted="costs of 0 or more")
    for q, iv in rec.forms:
        if len(set(iv)) != 4:
            raise VoicingError(f"form {q!r} = {list(iv)}", where=f"{where} [forms]",
                               accepted="four different intervals above the root")
    for _t, r, on, option in rec.substitutions:
        if on not in _ON:
            raise VoicingError(f"on = {on!r}", where=f"{where} [[substitutions]]", accepted=", ".join(_ON))
        if option and option not in GUIDE_OPTIONS:
            raise VoicingError(f"option = {option!r}", where=f"{where} [[substitutions]]",
                               accepted=", ".join(GUIDE_OPTIONS))
        if r not in (0, 7) and not option:
            # tensions stand for the root and the fifth; one in place of a guide tone is opt-in
            raise VoicingError(f"replaces = {r} without an option", where=f"{where} [[substitutions]]",
                               accepted="replaces = 0 (the root) or 7 (the fifth), or an option "
                                        "naming a voicing option (" + ", ".join(GUIDE_OPTIONS) + ")")
    bad = [v for _o, v in rec.auto_steps if v not in VOICINGS]
    if bad or set(dict(rec.doubling)) - {"lead", "root", "fifth"}:
        raise VoicingError(f"auto steps or doublings {bad or list(dict(rec.doubling))}", where=where,
                           accepted="voicings " + ", ".join(VOICINGS) + "; doublings lead, root, fifth")
    return rec


def _is_minor(chord: Chord) -> bool:
    return 3 in chord.intervals and 4 not in chord.intervals


@lru_cache(maxsize=1024)
def fifth_pc(chord: Chord) -> int:
    iv = {i % 12 for i in chord.intervals}
    fifth = 7 if 7 in iv else 6 if 6 in iv else 8 if 8 in iv else 7
    return (chord.root + fifth) % 12


@lru_cache(maxsize=1024)
def guide_tones(chord: Chord) -> tuple[int, ...]:
    """Pitch classes of the guide tones of ``chord``: the third (the 4th of a sus4 chord,
    the 2nd of a sus2), and the seventh (or the sixth)."""
    by_degree = dict(zip(chord.degrees, chord.intervals, strict=True))
    out = []
    for degrees in ((3, 4, 2), (7, 6)):
        iv = next((by_degree[d] for d in degrees if d in by_degree), None)
        if iv is not None:
            out.append((chord.root + iv) % 12)
    return tuple(out)


def four_note_form(chord: Chord, rec: Recipes) -> tuple[int, ...]:
    """The chord's four-note form as intervals above the root."""
    form = rec.form(chord.quality)
    if form is not None:
        return form
    iv = list(dict.fromkeys(i % 12 for i in chord.intervals))
    if len(iv) < 4:      # an unlisted triad: the sixth (major) or seventh (otherwise)
        iv.append(9 if 4 in iv and 9 not in iv else 10 if 10 not in iv else 11)
    for drop_first in (7, 0):   # more than four tones: leave out the fifth, then the root
        if len(iv) > 4 and drop_first in iv:
            iv.remove(drop_first)
    return tuple(iv[:4])


def _slots(base: tuple[int, ...], chord: Chord | None = None) -> dict[str, int | None]:
    """Positions in a four-note form of the root and the fifth (the tones a tension or a
    lead outside the chord may stand for); in a form without them (Ab13 as 3 b7 9 13) the
    tones standing for them: a ninth for the root, any other non-guide tone for the fifth."""
    guides = {(g - chord.root) % 12 for g in guide_tones(chord)} if chord is not None else set()
    free = [k for k, i in enumerate(base) if i not in guides]
    root = base.index(0) if 0 in base else next((k for k in free if base[k] in (1, 2, 3)), None)
    fifth = next((k for k, i in enumerate(base) if i == 7), None)
    if fifth is None:
        fifth = next((k for k in free if k != root and base[k] in (6, 8)), None)
    if fifth is None:
        fifth = next((k for k in free if k != root), None)
    return {"root": root, "fifth": fifth}


def chord_forms(chord: Chord, rec: Recipes, options: frozenset[str] = frozenset()
                ) -> list[tuple[tuple[int, ...], float]]:
    """The plain form and its tension substitutions, each with its cost.  A tension stands
    for the root or the fifth; in place of a guide tone only where ``options`` asks."""
    return list(_chord_forms(chord, rec, options))


@lru_cache(maxsize=1024)
def _base_slots(chord: Chord, rec: Recipes) -> tuple[tuple[int, ...], dict[str, int | None]]:
    """The chord's four-note form and the places of its root and fifth (:func:`_slots`),
    worked out once per chord: every lead note over it asks (not to be changed)."""
    base = four_note_form(chord, rec)
    return base, _slots(base, chord)


@lru_cache(maxsize=1024)
def _chord_forms(chord: Chord, rec: Recipes, options: frozenset[str]) -> tuple[tuple[tuple[int, ...], float], ...]:
    """:func:`chord_forms`, once per chord and options (the notes over a chord all ask)."""
    base, slots = _base_slots(chord, rec)
    avail = {t % 12 for t in chord.tensions} - set(base)
    subs = []
    for t, r, on, option in rec.substitutions:
        if option and option not in options:
            continue
        if t not in avail or not (on == "any" or (on == "dominant" and chord.is_dominant)
                                  or (on == "minor" and _is_minor(chord))):
            continue
        if option:
            pos = base.index(r) if r in base else None
        else:
            pos = slots["root"] if r == 0 else slots["fifth"]
        if pos is not None:
            # a substitution the project asked for by name is the house sound: no cost
            subs.append((t, pos, 0.0 if option else rec.weight("substitution")))
    out = [(base, 0.0)]
    for k in (1, 2):
        for combo in combinations(subs, k):
            if len({pos for _t, pos, _c in combo}) < k or len({t for t, _p, _c in combo}) < k:
                continue
            rep = dict((pos, t) for t, pos, _c in combo)
            form = tuple(rep.get(j, i) for j, i in enumerate(base))
            out.append((form, sum(c for _t, _p, c in combo)))
    return tuple(out)


def _with_lead(form: tuple[int, ...], lead_pc: int, chord: Chord, rec: Recipes
               ) -> list[tuple[tuple[int, ...], float]]:
    """The form's pitch classes with the lead's among them: as it is where it is one of
    them; else the lead stands for the root (a 9 of any kind) or the fifth (11, #11, b13,
    13), the other at a cost; a lead outside the chord and its tensions (a clash) stands
    for the fifth, so the chord keeps its own root, third and seventh under it.  The guide
    tones always stay."""
    pcs = tuple((chord.root + i) % 12 for i in form)
    if lead_pc in pcs:
        return [(pcs, 0.0)]
    base, slots = _base_slots(chord, rec)
    iv = (lead_pc - chord.root) % 12
    tension = iv in {t % 12 for t in chord.tensions}
    first = "root" if iv in (1, 2, 3) and tension else "fifth"
    order = [first, "fifth" if first == "root" else "root"]
    if not tension:
        order = ["fifth"] if slots["fifth"] is not None else ["root"]
    out = []
    for k, slot in enumerate(order):
        pos = slots[slot]
        if pos is None:
            continue
        out.append((tuple(lead_pc if j == pos else p for j, p in enumerate(pcs)),
                    rec.weight("substitution") * k))
    return out


def close_under(lead: int, pcs: tuple[int, ...]) -> tuple[int, ...]:
    """The lead, then the other pitch classes packed in the octave below it."""
    lead_pc = lead % 12
    below = sorted({(lead_pc - p) % 12 for p in pcs if p != lead_pc})
    return (lead,) + tuple(lead - d for d in below)


def drop(close: tuple[int, ...], vtype: str) -> tuple[int, ...]:
    """Drop voicings from a four-voice close shape (top to bottom)."""
    dropped = {"close": (), "drop2": (1,), "drop3": (2,), "drop2-4": (1, 3), "spread": (1, 3)}[vtype]
    moved = [p - 12 if i in dropped else p for i, p in enumerate(close)]
    return tuple(sorted(moved, reverse=True))


def structures(lead: int, chord: Chord, vtype: str, rec: Recipes,
               options: frozenset[str] = frozenset()) -> list[tuple[tuple[int, ...], float]]:
    """Four-voice structures under ``lead`` (distinct, each with its cost)."""
    out: dict[tuple[int, ...], float] = {}
    for form, cost in _chord_forms(chord, rec, options):
        for pcs, extra in _with_lead(form, lead % 12, chord, rec):
            if len(set(pcs)) < 4:
                continue
            shape = drop(close_under(lead, pcs), vtype)
            out[shape] = min(cost + extra, out.get(shape, cost + extra))
    return list(out.items())


def _extras(top: tuple[int, ...], e: int, chord: Chord, vtype: str, rec: Recipes,
            floor: int) -> list[tuple[tuple[int, ...], float]]:
    """Choices of ``e`` doubling voices for the structure ``top`` (top to bottom).
    They may fall between the structure's voices or below it; the result is the
    whole voicing, sorted top to bottom, so no two parts cross."""
    cost_of = {"lead": {top[0] % 12}, "root": {chord.root}, "fifth": {fifth_pc(chord)}}
    pc_cost: dict[int, float] = {}
    for name, c in rec.doubling:
        for pc in cost_of[name]:
            pc_cost[pc] = min(c, pc_cost.get(pc, c))
    # five voices and up in close writing: the lead an octave below first (two octaves
    # below, or no lead doubling at all, at a cost: where the part below cannot take it,
    # or where the lead is a b9 or a clash that must not sound at the bottom)
    firsts: list[tuple[tuple[int, ...], float]] = [((), 0.0)]
    if vtype == "close":
        firsts = [((top[0] - 12,), 0.0), ((top[0] - 24,), rec.weight("lead-two-octaves")),
                  ((), rec.weight("lead-not-doubled"))]
    out = []
    for fixed, c0 in firsts:
        rest = e - len(fixed)
        taken = set(top + fixed)
        low = max(min(top + fixed) - rec.extra_window, floor)
        pool = [p for p in range(top[0] - 1, low - 1, -1) if p % 12 in pc_cost and p not in taken]
        if rest > 4 or len(pool) < rest:
            continue
        for combo in combinations(pool, rest):
            voices = tuple(sorted(top + fixed + combo, reverse=True))
            if vtype == "spread" and voices[-1] % 12 != chord.root:
                continue
            out.append((voices, c0 + sum(pc_cost[p % 12] for p in combo)))
    fixed = firsts[0][0]
    if not out:   # many voices: each further voice doubles the voice four above, an octave down
        voices_l = list(top + fixed)
        for _ in range(e - len(fixed)):
            voices_l.append(voices_l[-4] - 12)
        out.append((tuple(sorted(voices_l, reverse=True)), 0.0))
    return out


def doublings(pitches: tuple[int, ...], chord: Chord) -> tuple[str, ...]:
    """What the voices beyond the first of each pitch class double, top to bottom, named
    by their degree over ``chord`` ("lead", "root", "fifth", "3", "b7" ...)."""
    seen: set[int] = set()
    out = []
    for k, p in enumerate(pitches):
        pc = p % 12
        if pc in seen:
            if pc == pitches[0] % 12:
                what = "lead"
            elif pc == chord.root:
                what = "root"
            elif pc == fifth_pc(chord) and (pc - chord.root) % 12 in chord.intervals:
                what = "fifth"
            else:
                what = _degree_name(chord, pc)
            out.append(f"{what} (part {k + 1})")
        seen.add(pc)
    return tuple(out)


_DEGREE_NAMES = {0: "root", 1: "b9", 2: "9", 3: "b3/#9", 4: "3", 5: "11", 6: "#11/b5", 7: "fifth",
                 8: "b13/#5", 9: "13/6", 10: "b7", 11: "7"}


def _degree_name(chord: Chord, pc: int) -> str:
    return _DEGREE_NAMES[(pc - chord.root) % 12]


@lru_cache(maxsize=4096)
def shapes(lead: int, chord: Chord, vtype: str, n: int, floor: int,
           options: frozenset[str] = frozenset()) -> tuple[tuple[tuple[int, ...], float], ...]:
    """All candidate voicings for ``n`` parts (top to bottom), each with its recipe cost.
    ``floor`` is the lowest pitch any extra voice may take (the section's extreme low);
    ``options`` the voicing options asked for (``GUIDE_OPTIONS``)."""
    rec = recipes()
    if vtype == "unison":
        out = []
        for ks in combinations_with_replacement(range(4), n - 1):
            out.append(((lead,) + tuple(lead - 12 * k for k in ks), 0.0))
        return tuple(out)
    found = structures(lead, chord, vtype, rec, options)
    if vtype == "spread":    # open above: the drop 2-4 shape, or drop 2 where that sits too low
        found += structures(lead, chord, "drop2", rec, options)
    if vtype == "spread" and n <= 4:
        guides = {chord.root, (chord.root + 3) % 12, (chord.root + 4) % 12, (chord.root + 10) % 12,
                  (chord.root + 11) % 12}
        found = [(s, c) for s, c in found if s[-1] % 12 in guides] or found
    result: dict[tuple[int, ...], float] = {}
    for top, cost in found:
        if n <= 4:
            for keep in combinations(top[1:], n - 1):
                result.setdefault((top[0],) + keep, cost)
        else:
            for v, c2 in _extras(top, n - 4, chord, vtype, rec, floor):
                result[v] = min(cost + c2, result.get(v, cost + c2))
    return tuple(result.items())
