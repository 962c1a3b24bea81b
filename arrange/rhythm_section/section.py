"""The rhythm-section stage's entry: a :class:`~arrange.harmony.Harmonized` and the
``[rhythm_section]`` options in, a :class:`RhythmSection` out."""
from __future__ import annotations

from arrange.harmony.events import Harmonized, stated_framework
from arrange.rhythm_section.bass import bass_line
from arrange.rhythm_section.comping import comping, hits
from arrange.rhythm_section.drums import drum_part
from arrange.rhythm_section.options import RhythmSectionOptions, style_for
from arrange.rhythm_section.values import RhythmSection
from arrange.voicing.sections import instruments

__all__ = ["build_rhythm_section"]


def build_rhythm_section(harmonized: Harmonized, options: RhythmSectionOptions) -> RhythmSection | None:
    """The asked rhythm parts, or None when the project asks for none."""
    if not options.parts:
        return None
    line = harmonized.line
    style, inst = style_for(options, line.groove)
    figures = hits(harmonized)
    # the bass plays the chord the section states at each framework beat (a substitute's root)
    framework = tuple(fc for fc in stated_framework(harmonized) if fc.onset >= 0)
    bass = bass_line(framework, line.meter, line.total, style, instruments()[inst].practical) \
        if "bass" in options.parts else ()
    comp = comping(harmonized, figures) if {"piano", "guitar"} & set(options.parts) else ()
    drums = drum_part(line, figures, options.fills) if "drums" in options.parts else None
    return RhythmSection(options.parts, style, inst, bass, comp, drums, line.meter.bar, line.total,
                         line.pickup)
