"""Chord symbols: parse and format the jazz chord-symbol vocabulary.

Accepted (common practice of lead sheets): a root ``A``-``G`` with ``b #`` (or
``♭ ♯``, double ``bb ##``); triads (major, ``m``, ``dim``/``o``/``°``,
``aug``/``+``, ``sus2``, ``sus4``/``sus``); ``6``, ``6/9`` (``69``), ``maj7``
(``M7``, ``Δ``, ``Δ7``), ``m7`` (``-7``, ``min7``), ``m6``, ``m(maj7)``
(``mmaj7``, ``mM7``), ``7``, ``m7b5`` (``ø``, ``ø7``), ``dim7`` (``°7``, ``o7``),
``7sus4``; extensions ``9 11 13`` (``maj9``, ``m11``, ``13sus4`` ...);
alterations ``b5 #5 b9 #9 #11 b13`` (also in parentheses, ``7(b9,#11)``); ``7alt``, the
altered dominant, voiced 1 3 b7 #9 b13 without its fifth (the altered scale's b9 and #11
are its further tensions);
a slash bass (``C7/E``).

:func:`parse_chord` gives a :class:`Chord`; ``Chord.symbol`` is the canonical
spelling, and ``parse_chord(c.symbol) == c`` for every chord (the round trip).
"""
from __future__ import annotations

import re
from dataclasses import dataclass
from functools import lru_cache

from arrange.errors import HarmonyError
from arrange.theory.scales import CHORD_SCALES, chord_scale_name, tensions_in_scale

__all__ = ["Chord", "parse_chord", "format_chord", "sounding_chord", "VOCABULARY", "ROOT_NAMES",
           "interval_name", "spell_name", "chord_scale_for"]

ROOT_NAMES = {"C": 0, "D": 2, "E": 4, "F": 5, "G": 7, "A": 9, "B": 11}
_LETTERS = "CDEFGAB"
_ACC = {"": 0, "b": -1, "bb": -2, "#": 1, "##": 2}
_ROOT_RE = re.compile(r"([A-G])(bb|b|##|#)?")
_BASS_RE = re.compile(r"/([A-G])(bb|b|##|#)?$")
_ALT_RE = re.compile(r"([b#+-])(5|9|11|13)")
# the alterations' punctuation: bare, or in closed groups with commas only between them
_ITEM = r"[b#+-]?[0-9]{1,2}"
_TAIL_RE = re.compile(rf"(?:{_ITEM}|\({_ITEM}(?:,?{_ITEM})*\))*")
_ALT_ORDER = ("b5", "#5", "b9", "#9", "#11", "b13")
# alteration -> (degree, interval above the root)
_ALTS = {"b5": (5, 6), "#5": (5, 8), "b9": (9, 1), "#9": (9, 3), "#11": (11, 6), "b13": (13, 8)}

# one symbol per family of the vocabulary, used for suggestions and the music21 cross-check
VOCABULARY = (
    "C", "Cm", "Cdim", "Caug", "Csus2", "Csus4", "C6", "C6/9", "Cmaj7", "Cm7", "Cm6", "Cm6/9",
    "Cm(maj7)", "C7", "Cm7b5", "Cdim7", "C7sus4", "C9", "C11", "C13", "Cmaj9", "Cmaj13",
    "Cm9", "Cm11", "Cm13", "Cm(maj9)", "C9sus4", "C13sus4", "C7b5", "C7#5", "C7b9", "C7#9",
    "C7#11", "C7b13", "C7b9#11", "C7#9b13", "C13#11", "C9#11", "Cmaj7#11", "Cmaj7#5",
    "Cmaj9#11", "C7/E", "Cm7/Bb", "Ebm9", "F#m7b5", "Bb13", "Db7#9", "Abmaj7/C", "Gb6/9",
)


@dataclass(frozen=True, slots=True)
class Chord:
    """A chord symbol.  ``intervals`` (above the root, 0..11) and ``degrees``
    (1 3 5 7 9 11 13, or 2 4 6 for sus2, sus4 and sixth) run in stacking order."""

    root: int                      # pitch class
    root_name: str                 # "Bb", "F#"
    quality: str                   # canonical suffix without the bass: "m7", "7b9#11", "6/9"
    intervals: tuple[int, ...]
    degrees: tuple[int, ...] = ()
    bass: int | None = None        # pitch class of a slash bass
    bass_name: str | None = None

    @property
    def symbol(self) -> str:
        return f"{self.root_name}{self.quality}" + (f"/{self.bass_name}" if self.bass_name else "")

    @property
    def pitch_classes(self) -> tuple[int, ...]:
        return tuple((self.root + i) % 12 for i in self.intervals)

    @property
    def is_dominant(self) -> bool:
        return 4 in self.intervals and 10 in self.intervals and 11 not in self.intervals

    @property
    def tensions(self) -> tuple[int, ...]:
        """Available tensions as intervals above the root, from the chord's usual
        chord scale (common jazz practice; see :mod:`arrange.keys`)."""
        return _tensions(self)

    @property
    def core(self) -> tuple[int, ...]:
        """The triad, sixth and seventh (degrees 1..7)."""
        return tuple(i for i, d in zip(self.intervals, self.degrees, strict=True) if d <= 7)

    def degree_of(self, interval: int) -> int | None:
        for i, d in zip(self.intervals, self.degrees, strict=True):
            if i == interval % 12:
                return d
        return None

    def __str__(self) -> str:
        return self.symbol


def spell_name(letter: str, semitones: int) -> str:
    """The name of ``letter`` raised or lowered to the pitch class ``semitones``."""
    diff = (semitones - ROOT_NAMES[letter] + 6) % 12 - 6
    return letter + ("#" * diff if diff > 0 else "b" * -diff)


def interval_name(root_name: str, interval: int, degree: int) -> str:
    """Spell the note ``interval`` semitones above ``root_name`` as chord degree ``degree``
    (stacked thirds: the third of Ab7 is C, the seventh of E7 is D)."""
    letter = _LETTERS[(_LETTERS.index(root_name[0]) + degree - 1) % 7]
    return spell_name(letter, ROOT_NAMES[root_name[0]] + _ACC[root_name[1:]] + interval)


def _normalise(text: str) -> str:
    s = text.strip().replace(" ", "").replace("♭", "b").replace("♯", "#")
    s = re.sub(r"Δ(?![0-9])", "maj7", s.replace("°", "o")).replace("Δ", "maj")
    return s


@dataclass(slots=True, eq=False)
class _Parts:
    """A chord symbol's parts while it is read."""
    third: str = "M"         # M, m, sus2, sus4
    fifth: int = 7           # 6 (b5), 7, 8 (#5)
    sixth: bool = False
    seventh: int | None = None   # 9 (dim7), 10, 11
    ext: int = 0             # 0, 9, 11, 13
    alts: tuple[str, ...] = ()
    alt: bool = False        # 7alt: voiced 1 3 b7 #9 b13 (no fifth), altered scale


def _suggest(text: str) -> str:
    s = _normalise(text)
    m = _ROOT_RE.match(s)
    root = m.group(0) if m else "C"
    suffixes = dict.fromkeys(_ROOT_RE.sub("", v, count=1) for v in VOCABULARY)
    pool = [root + q for q in suffixes if "/" not in q or q == "6/9"]
    import difflib          # only for the suggestion in an error

    close = difflib.get_close_matches(s, pool, n=3, cutoff=0.4)
    return ("closest: " + ", ".join(close) + "; " if close else "") + \
        "a root A-G (b #) then a quality such as m, dim, aug, sus4, 6, 6/9, maj7, m7, 7, m7b5, " \
        "dim7, m(maj7), 7sus4, 7alt, 9, 13, alterations b5 #5 b9 #9 #11 b13, and an optional /bass"


def parse_chord(text: str, *, where: str = "chord") -> Chord:
    """Read one chord symbol; raise :class:`HarmonyError` quoting it with close spellings."""
    if not isinstance(text, str):
        raise HarmonyError(f"{text!r} is not a chord symbol", where=where, accepted=_suggest(""))
    s = _normalise(text)

    def bad(why: str) -> HarmonyError:
        return HarmonyError(f"chord symbol {text!r} {why}", where=where, accepted=_suggest(text))

    m = _ROOT_RE.match(s)
    if not m:
        raise bad("has no root")
    root_name = m.group(1) + (m.group(2) or "")
    root = (ROOT_NAMES[m.group(1)] + _ACC[m.group(2) or ""]) % 12
    rest = s[m.end():]
    bass = bass_name = None
    bm = _BASS_RE.search(rest)
    if bm and not rest.endswith("6/9"):
        bass_name = bm.group(1) + (bm.group(2) or "")
        bass = (ROOT_NAMES[bm.group(1)] + _ACC[bm.group(2) or ""]) % 12
        rest = rest[:bm.start()]
    p = _read_suffix(rest, bad)
    quality = _format(p)
    intervals, degrees = _tones(p)
    if bass == root:
        bass = bass_name = None
    return Chord(root, root_name, quality, intervals, degrees, bass, bass_name)


def _read_suffix(s: str, bad) -> _Parts:  # noqa: ANN001, C901 - one small grammar, read in order
    p = _Parts()
    i = 0

    def take(*options: str) -> str | None:
        nonlocal i
        for o in sorted(options, key=len, reverse=True):
            if s.startswith(o, i):
                i += len(o)
                return o
        return None

    family = None if s.startswith("ma") and not s.startswith("min") \
        else take("ø", "dim", "o", "aug", "+", "min", "mi", "m", "-")
    if family == "ø":
        p.third, p.fifth, p.seventh = "m", 6, 10
        num = take("7", "9", "11", "13")
        p.ext = int(num) if num and num != "7" else 0
    elif family in ("dim", "o"):
        p.third, p.fifth = "m", 6
        if take("7"):
            p.seventh = 9
    elif family in ("aug", "+"):
        p.fifth = 8
        if take("maj7", "M7", "(maj7)"):
            p.seventh = 11
        elif take("7"):
            p.seventh = 10
    else:
        if family:
            p.third = "m"
        paren = take("(") if s.startswith(("(maj", "(Maj", "(ma", "(M"), i) else None
        maj = take("maj", "Maj", "ma", "M")
        num = take("6/9", "69", "6", "7", "9", "11", "13")
        if paren and (not maj or not take(")")):
            raise bad(f"has an unclosed or unknown parenthesis at position {i + 1}")
        if maj and num in ("6", "6/9", "69"):
            raise bad("mixes maj with a sixth")
        if maj and not num and p.third == "m":
            raise bad("needs a number after m(maj, e.g. m(maj7)")
        if num in ("6", "69", "6/9"):
            p.sixth = True
            p.ext = 9 if num != "6" else 0
        elif num:
            p.seventh = 11 if maj else 10
            p.ext = 0 if num == "7" else int(num)
    if take("alt"):
        if p.third != "M" or p.seventh != 10 or p.ext or p.fifth != 7 or family:
            raise bad("puts alt on a chord that is not a plain dominant seventh (e.g. C7alt)")
        if i < len(s):
            raise bad(f"has {s[i:]!r} after alt; 7alt names its alterations itself (#9 b13)")
        p.alt = True
        return p
    sus = take("sus2", "sus4", "sus")
    if sus:
        if p.third == "m" or p.fifth != 7 and family:
            raise bad("puts sus on a minor, diminished or augmented chord")
        p.third = "sus2" if sus == "sus2" else "sus4"
    alts: list[str] = []
    if any(c in s[i:] for c in "(),") and not _TAIL_RE.fullmatch(s, i):
        raise bad(f"has {s[i:i + 20]!r} at position {i + 1}: parentheses must be closed and hold "
                  "alterations, with commas only between them")
    while i < len(s):
        if take("(", ")", ","):
            continue
        m = _ALT_RE.match(s, i)
        if not m:
            raise bad(f"has {s[i:]!r} at position {i + 1} of the quality, which no chord symbol has there")
        a = {"+": "#", "-": "b"}.get(m.group(1), m.group(1)) + m.group(2)
        if a not in _ALTS:
            raise bad(f"has the alteration {a!r}, which is not one of " + " ".join(_ALT_ORDER))
        if a in alts:
            raise bad(f"repeats the alteration {a!r}")
        alts.append(a)
        i = m.end()
    for a in alts:
        if a in ("b5", "#5"):
            if p.fifth != 7:
                raise bad(f"alters a fifth that is already altered ({a})")
        elif (a in ("b9", "#9") and p.ext == 9) or (a == "#11" and p.ext == 11) \
                or (a == "b13" and p.ext == 13):
            raise bad(f"has {a} beside the natural extension it replaces")
    if "b5" in alts and "#5" in alts:
        raise bad("has both b5 and #5")
    if p.sixth and p.seventh:
        raise bad("has both a sixth and a seventh")
    if p.seventh == 9 and (p.ext or alts):
        raise bad("extends or alters a diminished seventh chord")
    for a in alts:
        if a == "b5":
            p.fifth = 6
        elif a == "#5":
            p.fifth = 8
    p.alts = tuple(a for a in _ALT_ORDER if a in alts and a not in ("b5", "#5"))
    return p


def _format(p: _Parts) -> str:
    if p.alt:
        return "7alt"
    sus = {"sus2": "sus2", "sus4": "sus4"}.get(p.third, "")
    fifth_alt = {6: "b5", 7: "", 8: "#5"}[p.fifth]
    if p.seventh is None and not p.sixth:
        if p.third == "m" and p.fifth == 6:
            head, fifth_alt = "dim", ""
        elif p.third == "M" and p.fifth == 8:
            head, fifth_alt = "aug", ""
        else:
            head = ("m" if p.third == "m" else "") + sus
    elif p.seventh == 9:
        head, fifth_alt = "dim7", ""
    else:
        minor = "m" if p.third == "m" else ""
        if p.sixth:
            num = "6/9" if p.ext == 9 else "6"
        elif p.seventh == 11:
            num = f"(maj{p.ext or 7})" if minor else f"maj{p.ext or 7}"
        else:
            num = str(p.ext or 7)
        head = minor + num + sus
    alts = fifth_alt + "".join(p.alts)
    if not head and alts:
        # "Cb5" or "C#9" would read as a Cb or C# root: a bare triad's alterations go in
        # parentheses, as lead sheets write them (common practice)
        return "(" + ",".join(_split_alts(alts)) + ")"
    return head + alts


def _split_alts(text: str) -> list[str]:
    out: list[str] = []
    for ch in text:
        if ch in "b#":
            out.append(ch)
        else:
            out[-1] += ch
    return out


def _tones(p: _Parts) -> tuple[tuple[int, ...], tuple[int, ...]]:
    if p.alt:       # the altered dominant as it is voiced: 1 3 b7 #9 b13, no fifth (common practice)
        return (0, 4, 10, 3, 8), (1, 3, 7, 9, 13)
    tones: list[tuple[int, int]] = [(0, 1)]
    tones.append({"M": (4, 3), "m": (3, 3), "sus2": (2, 2), "sus4": (5, 4)}[p.third])
    tones.append((p.fifth, 5))
    if p.sixth:
        tones.append((9, 6))
    if p.seventh is not None:
        tones.append((p.seventh, 7))
    alt = {a: _ALTS[a] for a in p.alts}
    # an alteration replaces the natural extension of its degree (C13b9: b9, no 9)
    if p.ext >= 9 and "b9" not in alt and "#9" not in alt:
        tones.append((2, 9))
    # dominant and major 13th chords leave out the 11 (it clashes with the third;
    # common jazz practice), minor chords keep it
    if (p.ext == 11 or (p.ext == 13 and p.third == "m")) and "#11" not in alt:
        tones.append((5, 11))
    if p.ext == 13 and "b13" not in alt:
        tones.append((9, 13))
    for a in _ALT_ORDER:
        if a in alt:
            iv, deg = alt[a][1], alt[a][0]
            tones.append((iv, deg))
    order = sorted(tones, key=lambda t: t[1])
    seen: dict[int, int] = {}
    for iv, deg in order:
        seen.setdefault(iv, deg)
    return tuple(seen), tuple(seen.values())


_SIXTH_TO_SEVENTH = {"6": "maj7", "6/9": "maj9", "m6": "m(maj7)", "m6/9": "m(maj9)"}


def sounding_chord(chord: Chord, pitch_classes: tuple[int, ...] | list[int] | set[int]) -> Chord:
    """The chord named for what sounds (common practice of lead sheets: a symbol names its
    content): a sixth chord whose voicing holds its major seventh is a major-seventh chord
    (Bb6 sounding A: Bbmaj7, the sixth its 13; Cm6 sounding B: Cm(maj7)).  Other chords as given."""
    new = _SIXTH_TO_SEVENTH.get(chord.quality)
    if new is None or (chord.root + 11) % 12 not in {p % 12 for p in pitch_classes if p is not None}:
        return chord
    bass = f"/{chord.bass_name}" if chord.bass_name else ""
    return parse_chord(f"{chord.root_name}{new}{bass}")


def format_chord(chord: Chord) -> str:
    return chord.symbol


@lru_cache(maxsize=4096)
def _tensions(chord: Chord) -> tuple[int, ...]:
    """Cached: the voicing and layer searches ask for every candidate."""
    return tensions_in_scale(chord.intervals, chord_scale_for(chord)[1], chord.is_dominant)


def chord_scale_for(chord: Chord) -> tuple[str, tuple[int, ...]]:
    """The usual chord scale of a chord out of key context (common jazz practice):
    its name and its intervals, the chord's own tones included."""
    name = chord_scale_name(chord.intervals, chord.quality)
    return name, tuple(sorted(set(CHORD_SCALES[name]) | set(chord.intervals)))
