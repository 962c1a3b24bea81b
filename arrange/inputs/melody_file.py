"""Input reader: a whole lead line from a file (``melody = "file:tune.musicxml"``).

Read with music21 (imported lazily): MusicXML (``.musicxml``, ``.xml``, ``.mxl``),
Standard MIDI Files (``.mid``, ``.midi``) and ABC (``.abc``).  One part (the first
with notes, or ``part = N``), at sounding pitch, ties merged, with its meter, key,
pickup and chord symbols.  What is not a lead note is never read as one: chord
symbols (music21 lists them among ``.notes``), grace notes and rests are skipped,
and a chord in the melody gives its top note (the note that carries the line).

Bars are counted from the first full bar (1); a pickup is bar 0.  ``bars = "9-16"``
keeps the notes that start in those bars, re-based so that the first bar kept is
bar 1; the pickup is kept with a range that starts at bar 1.

:func:`lead_notes` is the one definition of a lead note, shared with the motif
reader (:mod:`arrange.inputs.motif_file`).
"""
from __future__ import annotations

import hashlib
import re
from dataclasses import dataclass
from fractions import Fraction
from pathlib import Path
from typing import Any, NamedTuple

from arrange.errors import ProjectError

__all__ = ["Melody", "MelodyNote", "read_melody_file", "lead_notes", "parse_bars", "SUFFIXES",
           "MAX_BYTES"]

SUFFIXES = (".musicxml", ".xml", ".mxl", ".mid", ".midi", ".abc")
MAX_BYTES = 5_000_000
_ENTITY = re.compile(rb"<!ENTITY", re.I)
_GRID = 24          # every time kept is a multiple of 1/24 quarter (the rhythm stage's grid)
ACCEPTED = ("a readable MusicXML (.musicxml, .xml, .mxl), MIDI (.mid, .midi) or ABC (.abc) file, "
            "given relative to the project file, e.g. \"file:tune.musicxml\"")


@dataclass(frozen=True, slots=True, eq=False)
class MelodyNote:
    """One lead note of a melody file: sounding pitch, onset and duration."""
    pitch: int            # sounding MIDI number
    onset: Fraction       # quarter notes from the downbeat of bar 1 (a pickup is negative)
    duration: Fraction


@dataclass(frozen=True, slots=True, eq=False)
class Melody:
    """A lead line from outside the project: notes, meter, key, pickup, chord symbols."""
    notes: tuple[MelodyNote, ...]
    meter: str | None                      # "4/4" as the file writes it, None if it has none
    key: str | None                        # "F major", None if the file has no key
    pickup: Fraction                       # length of the anacrusis (0 = none)
    total: Fraction                        # whole bars from bar 1
    chords: tuple[tuple[Fraction, str], ...]   # (onset, chord symbol) as the file writes them
    source: str                            # the file name, for messages and the report
    breaks: tuple[Fraction, ...] = ()      # onsets of notes marked as a phrase's end (breath mark, fermata)


def parse_bars(text: object, *, where: str) -> tuple[int, int]:
    """``"1-16"`` or ``"9"`` -> (first, last), 1-based."""
    m = re.fullmatch(r"\s*(\d+)\s*(?:-\s*(\d+))?\s*", text) if isinstance(text, str) else None
    if m is None or int(m.group(1)) < 1 or (m.group(2) and int(m.group(2)) < int(m.group(1))):
        raise ProjectError(f"{text!r} is not a bar range", where=where,
                           accepted="\"FIRST-LAST\" or \"BAR\", bars counted from 1 (the first full bar), "
                                    "e.g. \"1-16\"")
    lo = int(m.group(1))
    return lo, int(m.group(2)) if m.group(2) else lo


def _m21_name(name: str) -> str:
    return name.replace("-", "b")


def _grid(x: Any) -> Fraction:
    """A music21 offset as a Fraction on the 1/24-quarter grid (MIDI files are quantized)."""
    return Fraction(round(Fraction(x) * _GRID), _GRID)


def lead_notes(part: Any) -> list[tuple[Fraction, Fraction, int]]:
    """(flat offset, duration, pitch) of every lead note of a music21 part, ties merged:
    chord symbols, grace notes, rests and unpitched notes skipped, a chord's top note kept."""
    from music21 import harmony

    out = []
    for n in part.stripTies().flatten().notes:
        if isinstance(n, harmony.Harmony) or n.duration.isGrace or n.quarterLength == 0:
            continue
        pitches = [p.midi for p in getattr(n, "pitches", ())]
        if not pitches:
            continue
        out.append((_grid(n.offset), _grid(n.quarterLength), max(pitches)))
    # one note per onset: the highest (a second voice under the melody is not the lead)
    best: dict[Fraction, tuple[Fraction, Fraction, int]] = {}
    for on, dur, p in out:
        if on not in best or p > best[on][2]:
            best[on] = (on, dur, p)
    return [best[k] for k in sorted(best)]


def read_file_data(path: Path, where: str, what: str = "melody file") -> bytes:
    """The bytes of an input file, refused with one named line if unreadable or too big."""
    if path.suffix.lower() not in SUFFIXES:
        raise ProjectError(f"{what} {str(path)!r} has the suffix {path.suffix or '(none)'!r}",
                           where=where, accepted=ACCEPTED)
    from arrange.checked import read_regular

    # a regular file only (no device or FIFO, after links), its size checked before reading
    data = read_regular(path, MAX_BYTES, where=where, what=what, accepted=ACCEPTED)
    if path.suffix.lower() in (".musicxml", ".xml") and _ENTITY.search(data):
        raise ProjectError(f"{what} {str(path)!r} declares XML entities", where=where,
                           accepted="MusicXML without <!ENTITY> declarations")
    return data


def parse_score(data: bytes, path: Path, where: str, what: str = "melody file") -> Any:
    """A music21 score (the first tune of an ABC book) from the file's bytes."""
    import warnings

    from music21 import converter, stream

    suffix = path.suffix.lower()
    fmt = {".mid": "midi", ".midi": "midi", ".abc": "abc", ".mxl": "musicxml"}.get(suffix, "musicxml")
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            if fmt == "midi":
                score = converter.parseData(data, format="midi")
            else:
                text = _unzip_mxl(data) if suffix == ".mxl" else data
                score = converter.parseData(text.decode("utf-8", errors="strict"), format=fmt)
    except ProjectError:
        raise
    except Exception as err:  # noqa: BLE001 - any parser fault is bad input here
        raise ProjectError(f"{what} {str(path)!r} cannot be read as {fmt.upper() if fmt != 'musicxml' else 'MusicXML'}: "
                           f"{type(err).__name__}", where=where, accepted=ACCEPTED) from None
    if isinstance(score, stream.Opus):
        scores = list(score.scores)
        if not scores:
            raise ProjectError(f"{what} {str(path)!r} holds no tune", where=where, accepted=ACCEPTED)
        score = scores[0]
    return score


def _unzip_mxl(data: bytes) -> bytes:
    """The root MusicXML of a .mxl archive (entities refused as for .musicxml)."""
    import io
    import zipfile

    if not data.startswith(b"PK"):
        raise ValueError("not a compressed MusicXML archive")
    with zipfile.ZipFile(io.BytesIO(data)) as z:
        names = [n for n in z.namelist() if n.lower().endswith((".xml", ".musicxml"))
                 and not n.startswith("META-INF")]
        if not names:
            raise ValueError("no MusicXML inside")
        if z.getinfo(names[0]).file_size > 4 * MAX_BYTES:
            raise ValueError("archive member too large")
        inner = z.read(names[0])
    if _ENTITY.search(inner):
        raise ValueError("XML entities declared")
    return inner


def parts_with_notes(score: Any) -> list[Any]:
    from music21 import stream

    parts = list(score.parts) if isinstance(score, stream.Score) else [score]
    return [p for p in parts if lead_notes(p)]


def read_melody_file(path: Path, *, where: str, part: int | None = None,
                     bars: tuple[int, int] | None = None, store: Any = None) -> Melody:
    """The melody of ``path``: part ``part`` (1-based among the parts with notes; the first
    by default), bars ``bars`` (1-based, inclusive).

    ``store`` (optional; the build passes the user's cache folder, ``writers.cache``) keeps
    what the file says (:func:`file_facts`) by the file's bytes, the part asked for, this
    reader's source and music21's version: a file read before is not parsed again, and
    music21 is not imported.  Anything wrong with a stored entry means parse again."""
    data = read_file_data(path, where)
    digest = hashlib.sha256(data).digest()
    key = (path.suffix.lower(), digest, part)
    facts = _PARSED.get(key)
    name = None
    if facts is None and store is not None:
        name = _store_name(key)
        facts = _decode(store.get(name)) if name is not None else None
    if facts is None:
        facts = file_facts(_sounding_part(data, path, where, part), path, where)
        if store is not None and name is not None:
            store.put(name, _encode(facts))
    if len(_PARSED) >= _KEEP and key not in _PARSED:   # a form's passages often read one file: keep a few
        del _PARSED[next(iter(_PARSED))]
    _PARSED[key] = facts
    return _melody(facts, path, where, bars)


# what a file says (file_facts), by (suffix, the file's bytes' digest, part): the passages of
# a form that take their bars from one file parse it once (music21's parse, its
# sounding-pitch copy and its tie merging are most of the reading)
_PARSED: dict[tuple[str, bytes, int | None], Facts] = {}
_KEEP = 4
_FORMAT = 1          # the stored form of Facts (see _encode)


class Facts(NamedTuple):
    """What a melody file's chosen part says, read once by music21 (plain values): the
    meter as written, the key, the bar's length, the pickup's length, the lead notes
    (flat offset, duration, pitch), the phrase marks' offsets and the chord symbols
    (flat offset, our spelling)."""
    meter: str | None
    key: str | None
    bar: Fraction
    pickup: Fraction
    lead: tuple[tuple[Fraction, Fraction, int], ...]
    marks: tuple[Fraction, ...]
    chords: tuple[tuple[Fraction, str], ...]


def file_facts(p: Any, path: Path, where: str) -> Facts:
    """The plain facts of a music21 part (the one place that reads a parsed part)."""
    from music21 import harmony, stream

    meter_text, ts, key_text = _meter_and_key(p, path, where)
    bar = Fraction(ts.barDuration.quarterLength) if ts is not None else Fraction(4)
    measures = list(p.getElementsByClass(stream.Measure))
    pickup = Fraction(0)
    if measures:
        first = measures[0]
        content = _grid(first.highestTime)
        if first.paddingLeft or 0 < content < bar:
            pickup = content
    chords = tuple((_grid(cs.offset), chord_text(cs))
                   for cs in p.flatten().getElementsByClass(harmony.ChordSymbol)
                   if not isinstance(cs, harmony.NoChord))
    return Facts(meter_text, key_text, bar, pickup, tuple(lead_notes(p)), tuple(phrase_marks(p)), chords)


def _store_name(key: tuple[str, bytes, int | None]) -> str | None:
    """The stored entry's name: a digest of the file's bytes, the part, this reader's own
    source and music21's version (None when music21's version cannot be known)."""
    from importlib.metadata import PackageNotFoundError, version

    try:
        m21 = version("music21")
    except PackageNotFoundError:
        return None
    try:
        reader = Path(__file__).read_bytes()
    except OSError:
        from arrange import __version__ as reader_bytes

        reader = reader_bytes.encode()
    h = hashlib.sha256()
    for piece in (str(_FORMAT).encode(), key[0].encode(), key[1], repr(key[2]).encode(),
                  hashlib.sha256(reader).digest(), m21.encode()):
        h.update(len(piece).to_bytes(4, "big") + piece)
    return "melody-" + h.hexdigest()


def _frac(x: Fraction) -> list[int]:
    return [x.numerator, x.denominator]


def _encode(f: Facts) -> dict[str, Any]:
    """Facts as JSON values (fractions as [numerator, denominator])."""
    return {"format": _FORMAT, "meter": f.meter, "key": f.key, "bar": _frac(f.bar), "pickup": _frac(f.pickup),
            "lead": [[*_frac(on), *_frac(d), p] for on, d, p in f.lead],
            "marks": [_frac(on) for on in f.marks], "chords": [[*_frac(on), text] for on, text in f.chords]}


def _decode(obj: Any) -> Facts | None:
    """Facts from their JSON values; None for anything else (a damaged or foreign entry)."""
    def frac(n: Any, d: Any) -> Fraction:
        if type(n) is not int or type(d) is not int or d <= 0:
            raise ValueError
        return Fraction(n, d)

    def text(x: Any) -> str | None:
        if x is not None and type(x) is not str:
            raise ValueError
        return x

    try:
        if not isinstance(obj, dict) or obj.get("format") != _FORMAT:
            return None
        lead = tuple((frac(a, b), frac(c, d), p) for a, b, c, d, p in obj["lead"])
        if not lead or any(type(p) is not int or not 0 <= p <= 127 or d <= 0 for _o, d, p in lead):
            return None
        chords = tuple((frac(a, b), t) for a, b, t in obj["chords"])
        if any(type(t) is not str for _o, t in chords):
            return None
        bar = frac(*obj["bar"])
        if bar <= 0:
            return None
        return Facts(text(obj["meter"]), text(obj["key"]), bar, frac(*obj["pickup"]), lead,
                     tuple(frac(a, b) for a, b in obj["marks"]), chords)
    except (KeyError, TypeError, ValueError, ZeroDivisionError):
        return None


def _sounding_part(data: bytes, path: Path, where: str, part: int | None) -> Any:
    score = parse_score(data, path, where)
    is_midi = path.suffix.lower() in (".mid", ".midi")
    parts = parts_with_notes(score)
    if not parts:
        raise ProjectError(f"melody file {str(path)!r} has no notes", where=where,
                           accepted="a file whose melody part holds notes (chord symbols, rests and "
                                    "grace notes alone are no melody)")
    if part is not None and not 1 <= part <= len(parts):
        raise ProjectError(f"part = {part} but melody file {str(path)!r} has {len(parts)} part"
                           f"{'s' if len(parts) != 1 else ''} with notes", where=where,
                           accepted=f"part = 1 to {len(parts)}")
    chosen = parts[(part or 1) - 1]
    if not is_midi:
        chosen = chosen.toSoundingPitch()
    return chosen


def _meter_and_key(p: Any, path: Path, where: str) -> tuple[str | None, Any, str | None]:
    from music21 import key as m21key
    from music21 import meter

    sigs = list(p.flatten().getElementsByClass(meter.TimeSignature))
    if len({ts.ratioString for ts in sigs}) > 1:
        raise ProjectError(f"melody file {str(path)!r} changes meter "
                           f"({', '.join(dict.fromkeys(ts.ratioString for ts in sigs))})", where=where,
                           accepted="a melody in one meter (split it into passages, one per meter, "
                                    "is not supported either: one meter per project)")
    ts = sigs[0] if sigs else None
    keys = list(p.flatten().getElementsByClass(m21key.KeySignature))
    key_text = None
    if keys:
        k = keys[0] if isinstance(keys[0], m21key.Key) else keys[0].asKey("major")
        key_text = f"{_m21_name(k.tonic.name)} {k.mode}"
    return (ts.ratioString if ts is not None else None), ts, key_text


def _melody(facts: Facts, path: Path, where: str, bars: tuple[int, int] | None) -> Melody:
    bar = facts.bar
    pickup = facts.pickup
    notes = [(on - pickup, dur, pitch) for on, dur, pitch in facts.lead]
    breaks = [on - pickup for on in facts.marks]
    chords = [(on - pickup, text) for on, text in facts.chords]
    end = max(on + dur for on, dur, _ in notes)
    total_bars = max(1, -(-end // bar))
    if bars is not None:
        lo, hi = bars
        if hi > total_bars:
            raise ProjectError(f"bars = \"{lo}-{hi}\" but melody file {str(path)!r} has {total_bars} "
                               f"bar{'s' if total_bars != 1 else ''}", where=where,
                               accepted=f"a range within bars 1-{total_bars}")
        start, stop = (lo - 1) * bar, hi * bar
        keep_pickup = lo == 1
        notes = [(on - start, min(dur, stop - on), pt) for on, dur, pt in notes
                 if (start <= on < stop) or (keep_pickup and on < 0)]
        breaks = [on - start for on in breaks if start <= on < stop or (keep_pickup and on < 0)]
        sounding = [cs for on, cs in chords if on <= start]      # the chord already sounding at the first bar
        chords = [(on - start, cs) for on, cs in chords if start <= on < stop or (keep_pickup and on < 0)]
        if sounding and not keep_pickup and not any(on == 0 for on, _cs in chords):
            chords.insert(0, (Fraction(-1, _GRID), sounding[-1]))
        if not notes:
            raise ProjectError(f"bars = \"{lo}-{hi}\" of melody file {str(path)!r} hold no notes",
                               where=where, accepted="a range of bars with melody notes")
        if not keep_pickup:
            pickup = Fraction(0)
        total_bars = hi - lo + 1
    if not any(on < 0 for on, _d, _p in notes):
        pickup = Fraction(0)
    return Melody(tuple(MelodyNote(pt, on, dur) for on, dur, pt in notes), facts.meter, facts.key, pickup,
                  Fraction(total_bars) * bar, tuple(chords), path.name, tuple(sorted(set(breaks))))


def phrase_marks(part: Any) -> list[Fraction]:
    """Flat offsets of the lead notes that end a phrase by a mark the file writes: a breath
    mark or a fermata (the next note starts a new phrase)."""
    from music21 import articulations, expressions, harmony

    out = []
    for n in part.stripTies().flatten().notes:
        if isinstance(n, harmony.Harmony) or n.duration.isGrace:
            continue
        if any(isinstance(a, articulations.BreathMark) for a in n.articulations) or \
                any(isinstance(x, expressions.Fermata) for x in n.expressions):
            out.append(_grid(n.offset))
    return out


def chord_text(cs: Any) -> str:
    """A music21 chord symbol in our spelling: the file's own figure with ``-`` flats made
    ``b``; the bass spelled from the symbol's bass note."""
    figure = str(cs.figure).strip()
    root = _m21_name(cs.root().name)
    m = re.match(r"^[A-Ga-g][-#b♭♯]*", figure)
    suffix = figure[m.end():] if m else ""
    suffix = suffix.split("/")[0] if "/" in suffix and not suffix.endswith("6/9") else suffix
    text = root + suffix.replace("-", "b") if not suffix.startswith("-") else root + "m" + suffix[1:]
    bass = cs.bass()
    if bass is not None and bass.name != cs.root().name:
        text += "/" + _m21_name(bass.name)
    return text
