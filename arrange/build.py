"""The pipeline: a :class:`~arrange.project.Project` through every stage, then
the writers.  Stages return immutable values; only :func:`write_outputs`
touches the disk (through :mod:`arrange.writers.files`)."""
from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING

from arrange import __version__
from arrange.chain.core import build_chain, chain_length
from arrange.errors import ArrangeError, LimitError, VoicingError
from arrange.harmony.events import Harmonized
from arrange.harmony.harmonizer import harmonize
from arrange.project import Project
from arrange.rhythm.line import lay_rhythm
from arrange.voicing.sections import Section
from arrange.voicing.voicer import Voiced, VoicingOptions, voice

if TYPE_CHECKING:        # the rhythm section and the layers are imported when a project has them
    from arrange.rhythm_section import RhythmSection
    from arrange.voicing.layers import VoicedLayer

__all__ = ["check_size", "written_notes", "MAX_SCORE_NOTES", "run_pipeline", "run_layers",
           "run_rhythm_section", "render_outputs", "render_project", "write_outputs", "BuildResult",
           "refuse_errors", "default_lead_range", "signature_plan"]


@dataclass(frozen=True, slots=True, eq=False)
class BuildResult:
    """What a build wrote: the voiced passage, the written files and the voiced layers."""
    voiced: Voiced
    files: tuple[Path, ...]
    layers: tuple[VoicedLayer, ...] = ()

    @property
    def warnings(self) -> int:
        return (len(self.voiced.findings) + len(self.voiced.harmonized.warnings)
                + sum(len(v.findings) for v in self.layers))

    @property
    def severities(self) -> tuple[int, int]:
        """(errors, warnings) as the report counts them: harmony warnings are warnings,
        voicing and layer findings carry their own severity."""
        sev = [f.severity for f in self.voiced.findings]
        sev += [f.severity for v in self.layers for f in v.findings]
        errors = sev.count("error")
        return errors, len(sev) - errors + len(self.voiced.harmonized.warnings)

    def report_path(self) -> Path | None:
        """The Markdown report among the written files (None when not asked)."""
        return next((p for p in self.files if p.name.endswith(".report.md")), None)


# the writers take about 2 ms per written note on a laptop; past this a build takes minutes
MAX_SCORE_NOTES = 40_000


def written_notes(project: Project) -> tuple[int, int]:
    """(lead notes, written notes) of a project, known before the slow stages run:
    the lead section writes one note per lead note and part; a layer writes at most
    one chord per rhythm value (its shortest) and chord change, per part (pad), or
    one per lead note (hits).  The rhythm stage, which is quick, gives the length."""
    c = project.chain
    line = None
    if c is not None:
        notes = chain_length(len(c.motif), c.statements, c.overlap)
    elif project.melody is not None:
        notes = len(project.melody.notes)
    else:
        from arrange.form import lead_notes_estimate

        notes = lead_notes_estimate(project.passages)
    written = notes * max(len(s.parts) for s in _sections(project))
    if not project.layers or written > MAX_SCORE_NOTES:
        return notes, written
    try:
        if c is not None:
            line = lay_rhythm(build_chain(c.motif, c.statements, c.overlap, None), project.meter,
                              project.rhythm)
        elif project.melody is not None:
            from arrange.rhythm.melody import lay_melody

            line = lay_melody(project.melody, project.meter, project.rhythm, where="melody")
    except ArrangeError:
        pass                                       # the pipeline reports it where it belongs
    beats = max(1, len(project.meter.beats))
    if line is not None:
        length, bars = line.total, line.bars
    else:                                          # passages: a lead note a beat, as a rough guide
        length = notes * project.meter.bar / beats
        bars = int(length / project.meter.bar) + 1
    changes = (bars + 1) * beats                   # at most one framework chord per beat
    for la in project.layers:
        if la.role == "pad":
            shortest = min(v for v, rest in la.rhythm if not rest)
            per_part = int(length / shortest) + 1 + changes
        else:
            per_part = notes
        written += per_part * len(la.section.parts)
    return notes, written


def _sections(project: Project) -> list[Section]:
    """The sections that voice the lead: the project's, and a form's passages' own."""
    return [project.section] + [p.section for p in project.passages if p.section is not None]


def check_size(project: Project, *, where: str | None = None, already: int = 0) -> int:
    """Refuse, before any work starts, a passage too big to write in reasonable time;
    ``already`` counts the notes of the other combinations of a ``--vary`` build."""
    notes, written = written_notes(project)
    if written + already > MAX_SCORE_NOTES:
        name = project.path.name if project.path else "project"
        parts = max(len(s.parts) for s in _sections(project)) + sum(len(la.section.parts) for la in project.layers)
        what = (f"{notes} lead notes for {parts} parts"
                + (" (layers included)" if project.layers else "") + f" make {written:,} written notes")
        if already:
            what += f", {written + already:,} with the combinations before it"
        raise LimitError(what, where=where or f"{name}, key 'chain.statements'",
                         accepted=f"at most {MAX_SCORE_NOTES:,} written notes in one build (lead notes x "
                         "parts, layers and --vary combinations included): fewer statements, "
                         "combinations or parts, or longer layer rhythms")
    return written


def run_pipeline(project: Project) -> Voiced:
    check_size(project)
    where = f"{project.path.name if project.path else 'project'} [harmony]"
    if project.passages:
        from arrange.form import run_form

        from arrange.staffing import check_players, voice_form

        check_players(project)
        harmonized, voicing_options = run_form(project)
        return voice_form(harmonized, project, voicing_options, _voice)
    if project.melody is not None:
        from arrange.rhythm.melody import lay_melody

        name = project.path.name if project.path else "project"
        melody_line = lay_melody(project.melody, project.meter, project.rhythm,
                                 where=f"{name}, key 'melody'")
        return _voice(harmonize(melody_line, project.key, project.harmony, where=where),
                      project.section, project.voicing)
    c = project.chain
    assert c is not None
    # no lead_range given: the chain is placed into the lead instrument's practical range;
    # where the section cannot voice it there inside its extreme ranges, an octave higher,
    # then lower (inside the lead's extreme range); a lead_range given is kept as written
    lo, hi = default_lead_range(project.section)
    ranges = [c.lead_range] if c.lead_range else [(lo + k, hi + k) for k in (0, 12, -12)]
    first_error: ArrangeError | None = None
    for lead_range in ranges:
        try:
            chain = build_chain(c.motif, c.statements, c.overlap, lead_range)
        except ArrangeError as err:
            raise _in_project(err, project, "chain") from None
        line = lay_rhythm(chain, project.meter, project.rhythm)
        harmonized = harmonize(line, project.key, project.harmony, where=where)
        try:
            return _voice(harmonized, project.section, project.voicing)
        except VoicingError as err:
            first_error = first_error or err
    assert first_error is not None
    raise first_error


def default_lead_range(section: Section) -> tuple[int, int]:
    """Where a chain with no ``lead_range`` is placed: the lead's practical range, its
    floor raised so a close voicing fits under it inside every part's practical range (the
    lead group's parts, in a tutti); at least an octave wide."""
    parts = section.parts[:section.groups[0][2]] if section.groups else section.parts
    lo, hi = parts[0].instrument.practical
    # a close voicing puts part k (0-based) about a minor third per part under the lead,
    # the parts past the fourth doubling about an octave under it
    need = max(p.instrument.practical[0] + min(3 * k, 12) for k, p in enumerate(parts))
    return min(max(lo, need), hi - 12), hi


def _voice(harmonized: Harmonized, section: Section, options: VoicingOptions) -> Voiced:
    """The voicing stage: a tutti section (several sections voiced as one) through
    :mod:`arrange.voicing.tutti`, any other section through :func:`voice`."""
    if section.groups:
        from arrange.voicing.tutti import voice_tutti

        voiced = voice_tutti(harmonized, section, options)
    else:
        voiced = voice(harmonized, section, options)
    refuse_errors(voiced)
    return named_as_sounding(voiced)


def refuse_errors(voiced: Voiced) -> None:
    """An error in the music (a note beyond an extreme range) stops the build before
    anything is written: exit 2, the first error's bar, part and note named."""
    from arrange.errors import VoicingError

    errors = [f for f in voiced.findings if f.severity == "error"]
    if errors:
        first = errors[0]
        more = f" (and {len(errors) - 1} more)" if len(errors) > 1 else ""
        raise VoicingError(f"{first.part or 'the section'}: {first.message}{more}", where="[section]",
                           accepted="a lead range or section whose parts reach every note, "
                                    "or allow_extreme = true")


def named_as_sounding(voiced: Voiced) -> Voiced:
    """Each event's chord named for what its voicing sounds (``theory.chords.sounding_chord``:
    a sixth chord holding its major seventh is written maj7), the why saying so."""
    from dataclasses import replace

    from arrange.theory.chords import sounding_chord

    events = []
    for ve in voiced.events:
        ch = sounding_chord(ve.event.chord, ve.pitches)
        if ch != ve.event.chord:
            ev = ve.event
            why = (f"{ev.why}; the voicing sounds its major seventh, so the symbol is {ch.symbol} "
                   f"(the sixth is its 13)")
            ve = replace(ve, event=replace(ev, chord=ch, why=why))
        events.append(ve)
    return replace(voiced, events=tuple(events))


def run_rhythm_section(project: Project, voiced: Voiced) -> RhythmSection | None:
    """The project's written rhythm section ([rhythm_section] parts), or None."""
    if not project.rhythm_section.parts:
        return None
    from arrange.rhythm_section import build_rhythm_section

    return build_rhythm_section(voiced.harmonized, project.rhythm_section)


def run_layers(project: Project, voiced: Voiced) -> tuple[VoicedLayer, ...]:
    """The project's [[layers]], voiced under the lead section."""
    if not project.layers:
        return ()
    from arrange.voicing.layers import build_layers

    layers = build_layers(voiced.harmonized, voiced, project.layers)
    if project.passages and layers:
        from arrange.form import mute_layers
        from arrange.staffing import check_layer_overlaps

        layers = mute_layers(layers, voiced.harmonized, project.passages)
        check_layer_overlaps(voiced, layers, project)
    return layers


def _in_project(err: ArrangeError, project: Project, table: str) -> ArrangeError:
    """The same error, placed in the project file: ``p.toml, key 'chain.motif'``."""
    name = project.path.name if project.path else "project"
    where = f"{name}, key '{table}.{err.where}'" if err.where and " " not in err.where \
        else f"{name} [{table}]" + (f", {err.where}" if err.where else "")
    return type(err)(err.what, where=where, accepted=err.accepted)


def render_outputs(project: Project, voiced: Voiced, formats: tuple[str, ...],
                   notes: list[str] | None = None,
                   layers: tuple[VoicedLayer, ...] = (),
                   rhythm: RhythmSection | None = None, png: bool = True) -> dict[str, bytes]:
    """Every asked file as bytes, in memory, before anything is written.  One-line
    notices (audio skipped, say) are appended to ``notes``.  ``png=False`` leaves the
    preview's PNG to the caller (``--vary`` draws each distinct picture once)."""
    files: dict[str, bytes] = {}
    slug = project.slug
    out = project.output
    info = None
    pdf = "pdf" in formats
    if "musicxml" in formats or "preview" in formats or out.parts or pdf:
        from arrange.writers.musicxml import ScoreInfo, musicxml_bytes, score_tree

        info = ScoreInfo(project.title, project.tempo, _style(project), dynamics=out.dynamics,
                         analysis=out.analysis, concert=out.concert_score, version=__version__,
                         signatures=signature_plan(project, voiced.harmonized))
    if info is not None and ("musicxml" in formats or "preview" in formats or pdf):
        # the full score only when it is written or drawn
        if rhythm is not None and rhythm.parts:
            from arrange.writers.xml_rhythm import rhythm_score_bytes

            xml = rhythm_score_bytes(score_tree(voiced, info, layers), rhythm,
                                     _signed(voiced.harmonized, info.signatures), len(voiced.section.parts),
                                     bass_names=_bass_names(voiced, layers, rhythm))
        else:
            xml = musicxml_bytes(voiced, info, layers)
        if "musicxml" in formats:
            files[f"{slug}.musicxml"] = xml
        if "preview" in formats:
            from arrange.writers.preview import have_png, png_bytes, svg_bytes

            svg = svg_bytes(xml, notes)
            files[f"{slug}.svg"] = svg
            if png and have_png():
                files[f"{slug}.png"] = png_bytes(svg)
            elif png and notes is not None:
                notes.append("preview: PNG skipped, resvg-py is not installed (pip install resvg-py)")
        if pdf:
            from arrange.writers.pdf import pdf_bytes

            kind = "Concert score" if out.concert_score else "Transposed score"
            files[f"{slug}.pdf"] = pdf_bytes(xml, project.title, kind, out.paper, part=False)
    if (out.parts or pdf) and info is not None:
        from arrange.project import slugify
        from arrange.writers.musicxml import part_bytes

        parts_dir = f"{slug}-parts"        # one folder, replaced as a whole (writers.files)
        named: list[tuple[str, bytes]] = [(voiced.section.parts[k].name, part_xml)
                                          for k, part_xml in part_bytes(voiced, info, layers).items()]
        if layers:
            from arrange.writers.xml_layers import layer_part_bytes

            named += layer_part_bytes(voiced, info, layers)
        if rhythm is not None:
            from arrange.writers.xml_rhythm import rhythm_part_files

            named += rhythm_part_files(rhythm, _signed(voiced.harmonized, info.signatures), project.title,
                                       project.tempo, _style(project), __version__,
                                       bass_names=_bass_names(voiced, layers, rhythm))
        for k, (name, part_xml) in enumerate(named, start=1):
            stem = f"{parts_dir}/part{k:02d}-{slugify(name)}"
            if out.parts:
                files[f"{stem}.musicxml"] = part_xml
            if pdf:
                from arrange.writers.pdf import pdf_bytes

                files[f"{stem}.pdf"] = pdf_bytes(part_xml, project.title, name, out.paper)
    midi = None
    if "midi" in formats or out.audio:
        from arrange.writers.midi import MidiOptions, midi_bytes

        midi = midi_bytes(voiced, project.tempo,
                          MidiOptions(out.dynamics, out.humanize, out.seed), layers, rhythm)
        if "midi" in formats:
            files[f"{slug}.mid"] = midi
    if out.audio and midi is not None:
        from arrange.writers.audio import missing_message, wav_bytes

        wav = wav_bytes(midi)
        if wav is not None:
            files[f"{slug}.wav"] = wav
        elif notes is not None:
            notes.append(missing_message() or "audio skipped")
    if "report" in formats:
        from arrange.writers.report import report_data, report_json, report_markdown

        data = report_data(voiced, title=project.title, tempo=project.tempo, version=__version__,
                           dynamics=out.dynamics)
        if layers:
            from arrange.writers.report import fold_index, layer_warnings, layers_data

            data["layers"] = layers_data(layers, voiced)
            data["warnings"] = list(data["warnings"]) + layer_warnings(layers, data["events"],
                                                                       fold_index(voiced))
        if rhythm is not None:
            from arrange.writers.report_rhythm import rhythm_section_data

            data["rhythm_section"] = rhythm_section_data(rhythm, voiced.harmonized.line,
                                                         _bass_names(voiced, layers, rhythm))
        plan = signature_plan(project, voiced.harmonized)     # the key changes the score signs
        data["signatures"] = [{"bar": b, "key": str(k)}
                              for b, k in (voiced.harmonized.keys if plan is None else plan)]
        files[f"{slug}.report.json"] = report_json(data)
        files[f"{slug}.report.md"] = report_markdown(data)
    return files


def _signed(harmonized: Harmonized, signatures: tuple | None) -> Harmonized:
    """The harmony as the rhythm section's writer reads its key signatures."""
    from dataclasses import replace

    return harmonized if signatures is None else replace(harmonized, keys=signatures)


def signature_plan(project: Project, harmonized: Harmonized) -> tuple | None:
    """The key changes the score writes as key signatures, or None for every key change.

    A chain modulating statement by statement (``modulate = "by-statement"``) is a
    transition: its signature stays until the key it arrives in (the last change), where
    the new signature stands after a double bar, and the keys passed through on the way
    read with accidentals (common practice of charts: a signature every phrase is harder
    to read than a few accidentals).  ``[output] signatures = "each-statement"`` writes
    a signature at every statement's key instead.  Keys a project names (``keys``) and a
    form's passages keep their signatures."""
    if (project.output.signatures == "arrival" and not project.passages
            and project.harmony.modulate == "by-statement" and len(harmonized.keys) > 1):
        return (harmonized.keys[-1],)
    return None


def _bass_names(voiced: Voiced, layers: tuple[VoicedLayer, ...], rhythm: RhythmSection) -> tuple[str, ...]:
    """The bass part's concert names by the one spelling rule (``writers.common.bass_names``)."""
    from arrange.writers.common import bass_names

    return bass_names(voiced, layers, rhythm.bass)


def _style(project: Project) -> str:
    """The style word printed with the metronome mark: the project's own, or one
    from the groove and the tempo as lead sheets and big-band charts mark them
    (common practice; the tempo bands are from memory)."""
    if project.style:
        return project.style
    return default_style(project.rhythm.groove, project.tempo)


def default_style(groove: str, tempo: float) -> str:
    bands = {
        "swing": ((90, "Swing Ballad"), (130, "Easy Swing"), (190, "Medium Swing"),
                  (400, "Up Tempo Swing")),
        "shuffle": ((100, "Slow Shuffle"), (400, "Shuffle")),
        "latin": ((100, "Easy Latin"), (400, "Latin")),
        "straight": ((76, "Slowly"), (112, "Moderately"), (160, "Brightly"), (400, "Fast")),
    }.get(groove, ((400, groove.title()),))
    return next(word for top, word in bands if tempo < top or top == 400)


def render_project(project: Project, formats: tuple[str, ...] | None = None,
                   notes: list[str] | None = None,
                   progress: Callable[[str], None] | None = None,
                   png: bool = True) -> tuple[Voiced, tuple[VoicedLayer, ...], dict[str, bytes]]:
    """Every stage, then every asked file as bytes; ``progress`` hears "voicing" and
    "writing" as the work moves on (``png``: as :func:`render_outputs`)."""
    if progress is not None:
        progress("voicing")
    voiced = run_pipeline(project)
    layers = run_layers(project, voiced)
    rhythm = run_rhythm_section(project, voiced)
    if progress is not None:
        progress("writing")
    files = render_outputs(project, voiced, formats or project.output.formats, notes, layers, rhythm, png=png)
    return voiced, layers, files


def write_outputs(project: Project, out_dir: Path, formats: tuple[str, ...] | None = None,
                  notes: list[str] | None = None,
                  progress: Callable[[str], None] | None = None) -> BuildResult:
    from arrange.writers.files import write_batch

    voiced, layers, files = render_project(project, formats, notes, progress)
    paths = write_batch(out_dir, files)
    return BuildResult(voiced, tuple(paths), layers)
