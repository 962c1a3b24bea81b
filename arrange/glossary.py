"""The trade terms the tool uses, for ``arrange explain [TERM]``.

Each entry says what the term means and where the tool's own output shows it: a command
(``arrange chain ...``, ``arrange sections``) or the report of the starter project that
``arrange new`` writes.  The example line is not written here: the command runs when the
term is explained and :attr:`Term.pick` (a regular expression) takes the first line of its
output that matches, so an example can never drift from what the tool prints.
Plain data: no stage is imported here.
"""
from __future__ import annotations

import re
from dataclasses import dataclass

__all__ = ["Term", "TERMS", "STARTER_REPORT", "find_term", "normal"]

STARTER_REPORT = "the starter's report (arrange new, then arrange build)"

_CHAIN = ("chain", "C4 E4 D4 G4")


@dataclass(frozen=True, slots=True, eq=False)
class Term:
    term: str
    meaning: str
    source: tuple[str, ...]          # arguments of an arrange command; () = the starter's report
    pick: str                        # regex: the first output line it matches is the example
    aliases: tuple[str, ...] = ()

    @property
    def example_from(self) -> str:
        if not self.source:
            return STARTER_REPORT
        return "arrange " + " ".join(f'"{a}"' if " " in a else a for a in self.source)


TERMS: tuple[Term, ...] = (
    Term("motif", "The short figure the chain is grown from: a few notes, given by pitch name or MIDI "
         "number.", _CHAIN, r"^motif\s"),
    Term("statement", "One appearance of the motif in the chain: statement 1 is the motif itself (P), "
         "each later one is either the retrograde inversion of the one before or a transposition of "
         "the motif.", _CHAIN, r"^\s+1\s+P\s"),
    Term("RI", "Retrograde inversion: the motif played backwards and upside down. Every even "
         "statement of the chain is the RI of the one before, placed so that the two share notes.",
         _CHAIN, r"^\s+2\s+RI\s", ("retrograde inversion",)),
    Term("overlap", "How many notes one statement shares with the next: the last notes of a "
         "statement are the first notes of the following one.", _CHAIN, r"^overlaps\s"),
    Term("transposition", "How far a statement lies from statement 1, in semitones. Statement 3 at a "
         "transposition other than 0 (or an octave) makes the chain travel to new pitches.",
         _CHAIN, r"^transp\.\s"),
    Term("compass", "The distance from the first note of statement 1 to the last note of statement "
         "2: how far two statements carry the line.", _CHAIN, r"^compass\s"),
    Term("span", "The distance from the lowest to the highest note of the whole line.",
         _CHAIN, r"^span\s"),
    Term("aggregate", "All twelve pitch classes. A chain completes the aggregate at the note where "
         "the last missing pitch class arrives.", ("chain", "C4 Bb3 B3 Ab3", "-k", "6"),
         r"^pitch cl\..*aggregate"),
    Term("lead range", "The concert range the lead line must fit: notes outside it move by octaves "
         "(the raw line is the chain before the move).",
         ("chain", "C4 E4 D4 G4", "-k", "8", "--lead-range", "C4", "C5"), r"^raw line\s"),
    Term("section", "The group of players voicing the line, top part (the lead) first.",
         ("sections",), r"^trumpets-4:"),
    Term("practical range", "The notes a section player is asked to play, at concert (sounding) "
         "pitch; the part is written at its own transposition (written = sounding + the number "
         "shown).", ("sections",), r"^\s+Trumpet 1\s", ("concert pitch", "written pitch")),
    Term("low-interval limit", "The lowest note the lower of two adjacent voices may take for a "
         "given interval: below it the interval turns muddy, so close intervals thin out as the "
         "voicing goes down.", ("sections",), r"^\s+minor third\s", ("low interval limit",)),
    Term("framework", "The chords of the passage, bar by bar, as the project's [harmony] table "
         "gives them; every lead note is first heard against its framework chord.",
         (), r"^\| \d+ \| 2 \| 1 \| .*\| framework \|"),
    Term("chord tone", "A note of the chord itself (root, 3rd, 5th, 6th or 7th). A lead note that is "
         "a chord tone or an available tension (9, 11, 13 the chord's scale allows) keeps its "
         "framework chord.", (), r"^\| \d+ \| .*is the chord tone", ("available tension", "tension")),
    Term("approach chord", "A chord placed under a lead note that clashes with its framework chord, "
         "on a weak beat, resolving into the next framework chord (chromatic, diatonic, dominant, "
         "diminished or tritone substitute).", (), r"^\| \d+ \| .*\| approach \|"),
    Term("close", "Four-way close voicing: the four voices within an octave under the lead (with "
         "five parts the lowest doubles the lead an octave below).", (), r"^\| \d+ \| \d+ \| close \|",
         ("4-way close", "four-way close")),
    Term("drop 2", "A close voicing with its second voice from the top dropped an octave: a wider, "
         "more open sound for climbing lines and peaks.", (), r"^\| \d+ \| \d+ \| drop2 \|",
         ("drop2", "drop-2")),
    Term("pad", "A background layer holding the framework chords under the lead section, below its "
         "lowest voice; the report lists each chord it holds (chord, onset, length, pitches).", (),
         r"^\| [A-G][^|]* \| [\d./]+ \| [\d./]+ \| [A-G]", ("layer",)),
)


def normal(text: str) -> str:
    """A term as looked up: case, spaces, hyphens and dots do not matter."""
    return re.sub(r"[\s\-_.]+", "", text.lower())


def find_term(text: str) -> Term | None:
    key = normal(text)
    for t in TERMS:
        if key in {normal(t.term), *(normal(a) for a in t.aliases)}:
            return t
    return None
