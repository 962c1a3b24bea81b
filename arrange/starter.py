"""The commented starter project that ``arrange new`` writes (every stage's keys).

It is built to show the tool at its best on the first build (``tests/test_first_hour.py``
checks each): a motif whose chain travels (statement 3 two semitones up, each P statement
higher), chromatic lead notes that get approach chords, a drop-2 opening in the last
bar, a trombone pad under the trumpets, a preview, and no warning.  Its title comes
from the file name (:func:`title_from_name`), so two starters in one folder write
different files.
"""
from __future__ import annotations

import re

__all__ = ["STARTER", "starter_text", "title_from_name"]

STARTER = '''# An arrange project.  Change the values and run
#   arrange build {name} -o out
# Lines starting with # are optional keys, shown with an example value.
title = "{title}"
tempo = 132                      # quarter notes per minute
meter = "4/4"                    # 4/4 3/4 2/4 2/2 5/4 6/8 9/8 12/8 7/8 3/8
key = "Bb major"                 # tonic + mode (major, minor, dorian, mixolydian ...)
# style = "Medium Swing"         # the word over the metronome mark (default: from groove and tempo)

[chain]
motif = "D5 B4 C#5 D5"           # pitch names or MIDI numbers, or "file:theme.musicxml"
statements = 4
overlap = 2                      # or a list, one per link: [2, 3, 2]
# lead_range = ["C4", "G5"]      # concert pitch; default: the lead instrument's practical range

[rhythm]
groove = "swing"                 # straight | swing | shuffle | latin
# swing = 0.62                   # swing only: long share of a swung pair, 0.50..0.75
# cell = "8 8 4 8 8 4"           # note values cycled over the line; "r8" rest, "4~8" tie, "8t" triplet
# augment = [1, 1, 1.5, 2]     # duration factor per statement (or grow = 1.25)
# anticipate = true              # latin only: downbeat notes pushed an eighth early
# pickup = "8"                   # an anacrusis before bar 1

[harmony]
framework = "Bb6 | Cm7 F7 | Bb6 | Bb6"   # bars split by |; "Cm7:3 F7:1" gives beats
# approach = ["chromatic", "dominant", "diatonic", "diminished", "tritone"]   # in order of preference
# keys = ["Db major from bar 9"] # key changes by bar
# modulate = "by-statement"      # move key and framework with each P statement's transposition

[section]
name = "trumpets-4"              # see: arrange sections (or parts = [...] inline)
voicing = "close"                # close | drop2 | drop2-4 | drop3 | spread | unison | auto
by_bar = {{ "2" = "drop2" }}       # the last bar opens up (drop 2); wins over by_statement
# by_statement = {{ 4 = "spread" }}  # a voicing per statement
# allow_extreme = false

[output]
formats = ["musicxml", "midi", "report", "preview"]
dynamics = ["mp", "mf", "mf", "f"]   # one per statement (the last holds)
# analysis = true                # statement labels and approach techniques on the score
# parts = true                   # one MusicXML file per part, in written pitch
# rhythm_section = true          # old spelling of [rhythm_section] parts = ["bass", "drums"]

# The rhythm section, written in the score and the parts and played in the MIDI:
[rhythm_section]
# parts = ["piano", "guitar", "bass", "drums"]   # any of these
# bass = "auto"                  # auto (from the groove) | walking | two-beat | tumbao | shuffle | roots-fifths

# A background layer under the lead section (add more [[layers]] tables for more):
[[layers]]
section = "trombones-4"
role = "pad"                     # pad: the framework chords held | hits: short chords on the accents
rhythm = "2"                     # note values for the chords
dynamics = "p"
# placement = "under"            # under the lead section (thinned where it is low) | among: may reach into it
# A second layer: short chords on the accents
# [[layers]]
# section = "saxes-5"
# role = "hits"
# rhythm = "8"
# dynamics = "mf"
'''


def title_from_name(name: str) -> str:
    """``harbour-walk.toml`` -> ``Harbour Walk`` (a title the project file accepts)."""
    stem = name.rsplit("/", 1)[-1]
    stem = stem[:-5] if stem.lower().endswith(".toml") else stem
    words = [w for w in re.split(r"[\s_\-.]+", stem) if w]
    title = " ".join(w[:1].upper() + w[1:] for w in words)
    title = "".join(c for c in title if c.isprintable() and c not in '"\\/')[:60].strip()
    return title or "New Cue"


def starter_text(name: str) -> str:
    """The starter for a file called ``name``."""
    return STARTER.format(name=name, title=title_from_name(name))
