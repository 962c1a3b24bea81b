"""The lead walk of the harmony stage: framework chords and lead notes in, events out.

The walk runs from the last note to the first, so that every approach chord is
aimed at the chord that actually follows it (common practice of jazz ensemble
writing: an approach or passing chord falls on a position no stronger than the
chord it resolves to, and moves into it).  Before one target, a run of non-chord lead
notes becomes one coherent approach sequence: a note the following approach
chord already holds keeps that chord (a single approach chord held); any other
gets an approach chord aimed at the chord after it (a chain: chromatic steps,
the dominant of the dominant, ...).  A short chord tone on an off-beat inside
such a run keeps the approach chord that follows it when that chord holds it, so
the symbols do not flip between framework and approach every eighth.  Repeated
lead notes keep their chord.
"""
from __future__ import annotations

from dataclasses import replace
from fractions import Fraction

from arrange.harmony.approach import classify, find_approach, find_substitute, function_name
from arrange.harmony.events import Event, FrameworkChord
from arrange.rhythm.line import Line, Note
from arrange.theory.chords import Chord, parse_chord
from arrange.theory.keys import Key
from arrange.theory.spelling import direction_of, spell_pc

__all__ = ["strong_points", "strength", "walk", "holds"]

_HOLD_MAX = Fraction(1, 2)    # a chord tone an eighth long or shorter may be held over


def strong_points(meter) -> set[Fraction]:  # noqa: ANN001
    """The downbeat and the start of each large division (beat 3 of 4/4)."""
    groups = getattr(meter, "groups", None)
    if not groups:
        return {Fraction(0)} | ({Fraction(2)} if str(meter) == "4/4" else set())
    out, t = set(), Fraction(0)
    for g in groups:
        out.add(t)
        t += sum(g, Fraction(0))
    return out


def strength(note: Note, line: Line, chord_onsets: set[Fraction]) -> int:
    """Metric strength, lower is stronger: 0 a downbeat, a framework chord's start
    or an anticipation (it belongs to the downbeat it pushes); 1 the start of a
    large division (beat 3 of 4/4); 2 a beat; 3 an off-beat; 4 finer."""
    pos = note.onset % line.meter.bar
    if note.anticipated or pos == 0 or note.onset in chord_onsets:
        return 0
    if pos in strong_points(line.meter):
        return 1
    return max(2, min(4, note.weight + 1))


def holds(chord: Chord, pitch: int, key: Key) -> bool:
    return classify(pitch, chord, key) in ("chord tone", "tension")


def walk(line: Line, fw: tuple[FrameworkChord, ...], idx: list[int], keys: list[Key],
         techniques: tuple[str, ...]) -> tuple[list[Event], list[tuple[str, int | None, str]]]:

    notes = line.notes
    n = len(notes)
    bar_len = line.meter.bar
    onsets = {f.onset for f in fw}
    kinds = [classify(nt.pitch, fw[f].chord, kk) for nt, f, kk in zip(notes, idx, keys, strict=True)]
    structural = [kd in ("chord tone", "tension") for kd in kinds]
    pitches = [nt.pitch for nt in notes]
    events: list[Event | None] = [None] * n
    resolution: list[int] = list(range(n))     # the framework event an event's chain reaches
    notes_warn: dict[int, tuple[str, str]] = {}

    # the lead's neighbours, a held note's tied pieces (split.split_held) taken as one note
    before: list[int | None] = []
    for k in range(n):
        g = k
        while g > 0 and notes[g].tied:
            g -= 1
        before.append(pitches[g - 1] if g else None)
    after: list[int | None] = [None] * n
    for k in range(n - 1, -1, -1):
        nxt = k + 1
        while nxt < n and notes[nxt].tied:
            nxt += 1
        after[k] = pitches[nxt] if nxt < n else None

    # units: runs of one repeated pitch under one framework chord share a chord
    units: list[tuple[int, int]] = []
    i = 0
    while i < n:
        j = i
        while j + 1 < n and pitches[j + 1] == pitches[i] and idx[j + 1] == idx[i]:
            j += 1
        units.append((i, j))
        i = j + 1

    for a, b in reversed(units):
        note, frame, kk, kind = notes[a], fw[idx[a]].chord, keys[a], kinds[a]
        bar = int(note.onset // bar_len) + 1
        way = direction_of(before[a], note.pitch, after[b])
        func = function_name(note.pitch, frame)
        s = strength(note, line, onsets)
        nxt = b + 1 if b + 1 < n else None
        follow = events[nxt] if nxt is not None else None
        res = resolution[nxt] if nxt is not None else None
        weaker = follow is not None and res is not None and \
            strength(notes[res], line, onsets) <= s

        def name_for(chord: Chord, note: Note = note, kk: Key = kk, way: int = way) -> str:
            return spell_pc(note.pitch, kk, chord, way)

        def put(chord: Chord, role: str, tech: str | None, why: str, target: Chord | None,
                reach: int, a: int = a, b: int = b, kind: str = kind, note: Note = note,
                kk: Key = kk, way: int = way) -> None:
            for k in range(a, b + 1):
                lead = notes[k]
                text = why if k == a else f"repeated lead {name_for(chord)} keeps {chord.symbol}"
                direction = way if k == a else 0
                events[k] = Event(lead, chord, role, tech, function_name(lead.pitch, chord), text,
                                  kind, spell_pc(lead.pitch, kk, chord, direction) if k > a
                                  else name_for(chord), target)
                resolution[k] = reach

        held = follow is not None and follow.role == "approach" and weaker and \
            holds(follow.chord, note.pitch, kk)
        if structural[a]:
            what = "chord tone" if kind == "chord tone" else "available tension"
            if held and s >= 3 and note.duration <= _HOLD_MAX and b == a:
                assert follow is not None and res is not None
                ch = follow.chord
                put(ch, "approach", follow.technique,
                    f"{name_for(ch)} is the {what} {func} of {frame.symbol} on an off-beat inside an "
                    f"approach; {ch.symbol} holds it as {function_name(note.pitch, ch)} and resolves "
                    f"to {(follow.target or ch).symbol}", follow.target, res)
            else:
                put(frame, "framework", None,
                    f"{name_for(frame)} is the {what} {func} of {frame.symbol}", None, a)
            continue

        def label(chord: Chord, kind: str = kind, func: str = func, frame: Chord = frame) -> str:
            return (f"{name_for(chord)} is {'an avoid note' if kind == 'avoid' else 'a non-chord tone'}"
                    f" ({func}) of {frame.symbol}")

        if held and s > 0:
            assert follow is not None and res is not None
            ch = follow.chord
            put(ch, "approach", follow.technique,
                f"{label(ch)} on a weak position; {ch.symbol} holds it as "
                f"{function_name(note.pitch, ch)} and is held into the next note, then resolves to "
                f"{(follow.target or ch).symbol}", follow.target, res)
            continue
        if follow is not None and weaker and s > 0:
            assert res is not None
            target = follow.chord
            found = find_approach(note.pitch, target, target, kk, techniques)
            if found:
                ch, tech, what = found
                pos = f"leading into {target.symbol}" if nxt is not None and idx[nxt] != idx[a] \
                    else "on a weak position"
                put(ch, "approach", tech,
                    f"{label(ch)} {pos}; {ch.symbol}, {what}, holds it as "
                    f"{function_name(note.pitch, ch)} and resolves to {target.symbol}", target, res)
                continue
        if s == 0 and techniques and frame.quality == "7" and frame.bass is None and \
                (note.pitch - frame.root) % 12 == 5:
            # the 11 over a dominant at its own beat: the dominant with its third suspended
            # keeps the framework's harmonic rhythm and function (common practice)
            sus = parse_chord(f"{frame.root_name}7sus4")
            put(sus, "framework", "sus4",
                f"{label(sus)} at the chord's own beat; {sus.symbol}, {frame.symbol} with its third "
                f"suspended, holds it as {function_name(note.pitch, sus)}", None, a)
            continue
        if s <= 2 and techniques:      # approach = [] keeps every framework chord, substitutes too
            sub = find_substitute(note.pitch, frame, kk)
            if sub is not None:
                put(sub, "framework", "diatonic substitute",
                    f"{label(sub)} on a {'strong beat' if s <= 1 else 'beat'}; the diatonic "
                    f"{sub.symbol} shares its tones and holds it as {function_name(note.pitch, sub)}",
                    None, a)
                continue
        put(frame, "framework", None, f"{label(frame)}; kept, see the warning", None, a)
        nm = name_for(frame)
        if s <= 1:
            notes_warn[a] = ("avoid-note", f"bar {bar}: lead {nm} is the {func} of {frame.symbol} on a "
                             f"strong beat and no diatonic chord of {kk} holds it; the framework "
                             "chord is kept")
        else:
            techs = ", ".join(techniques) or "none allowed"
            why = "no approach technique (" + techs + ") holds it on the way to " + \
                follow.chord.symbol if follow is not None and weaker else \
                "the next chord lies on a weaker position, so no approach chord can resolve there" \
                if follow is not None else "it ends the line, with no chord to resolve to"
            notes_warn[a] = ("unserved-lead", f"bar {bar}: lead {nm} is the {func} of {frame.symbol} "
                             f"and {why}; the framework chord is kept")
    out = [e for e in events if e is not None]
    assert len(out) == n
    _no_flip_flop(out, keys, pitches, techniques)
    for k in range(1, n):      # a tie never changes a note's name
        if notes[k].tied and out[k].lead_name != out[k - 1].lead_name:
            out[k] = replace(out[k], lead_name=out[k - 1].lead_name)
    warnings: list[tuple[str, int | None, str]] = [
        (kind, k, msg) for k, (kind, msg) in sorted(notes_warn.items())]
    return out, warnings


def _no_flip_flop(out: list[Event], keys: list[Key], pitches: list[int],
                  techniques: tuple[str, ...]) -> None:
    """Approach X, framework Y, approach X on three neighbouring notes flips the symbols
    back and forth: the second X gives way to another technique's chord that holds the
    lead and resolves to the same target (E7 into A7 rather than Bb7 again)."""
    from dataclasses import replace

    for i in range(2, len(out)):
        a, b, c = out[i - 2], out[i - 1], out[i]
        if not (a.role == c.role == "approach" and b.role == "framework" and a.chord == c.chord
                and b.chord != c.chord and c.target is not None):
            continue
        if i + 1 < len(out) and out[i + 1].chord == c.chord:
            continue        # held on: the chord's own resolution comes later
        found = find_approach(c.note.pitch, c.target, c.target, keys[i], techniques, (c.chord,))
        if found is None:
            continue
        ch, tech, what = found
        way = direction_of(pitches[i - 1], pitches[i], pitches[i + 1] if i + 1 < len(out) else None)
        name = spell_pc(c.note.pitch, keys[i], ch, way)
        head = c.why.split(";")[0].split(" ", 1)[1]
        out[i] = replace(c, chord=ch, technique=tech, lead_function=function_name(c.note.pitch, ch),
                         lead_name=name,
                         why=f"{name} {head}; {ch.symbol}, {what}, holds it as "
                             f"{function_name(c.note.pitch, ch)} and resolves to {c.target.symbol} "
                             f"({c.chord.symbol} sounded two notes before)")
