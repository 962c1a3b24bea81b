"""The commented starter project that ``arrange new`` writes (every stage's keys)."""
from __future__ import annotations

__all__ = ["STARTER"]

STARTER = '''# An arrange project.  Change the values and run
#   arrange build {name} -o out
# Lines starting with # are optional keys, shown with an example value.
title = "New Cue"
tempo = 132                      # quarter notes per minute
meter = "4/4"                    # 4/4 3/4 2/4 2/2 5/4 6/8 9/8 12/8 7/8 3/8
key = "Bb major"                 # tonic + mode (major, minor, dorian, mixolydian ...)
# style = "Medium Swing"         # the word over the metronome mark (default: from groove and tempo)

[chain]
motif = "F4 D5 A4 Bb4"           # pitch names or MIDI numbers, or "file:theme.musicxml"
statements = 8
overlap = 2                      # or a list, one per link: [2, 3, 2]
# lead_range = ["C4", "G5"]      # concert pitch; default: the lead instrument's practical range

[rhythm]
groove = "straight"              # straight | swing | shuffle | latin
# swing = 0.62                   # swing only: long share of a swung pair, 0.50..0.75
# cell = "8 8 4 8 8 4"           # note values cycled over the line; "r8" rest, "4~8" tie, "8t" triplet
# augment = [1, 1, 1, 1, 1, 1, 1.5, 2]   # duration factor per statement (or grow = 1.25)
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
# by_statement = {{ 4 = "spread" }}
# allow_extreme = false

[output]
formats = ["musicxml", "midi", "report", "preview"]
# dynamics = ["mp", "mf", "f", "f"]   # one per statement
# analysis = true                # statement labels and approach techniques on the score
# parts = true                   # one MusicXML file per part, in written pitch
# rhythm_section = true          # old spelling of [rhythm_section] parts = ["bass", "drums"]

# The rhythm section, written in the score and the parts and played in the MIDI:
[rhythm_section]
# parts = ["piano", "guitar", "bass", "drums"]   # any of these
# bass = "auto"                  # auto (from the groove) | walking | two-beat | tumbao | shuffle | roots-fifths

# A background layer under the lead section:
# [[layers]]
# section = "trombones-4"
# role = "pad"                   # pad | hits
# rhythm = "1"
# dynamics = "p"
'''
