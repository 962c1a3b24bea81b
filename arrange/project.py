"""The project file (TOML): read it into a typed :class:`Project`.

Each stage reads its own table (``[chain]``, ``[rhythm]`` ...) through a
:class:`~arrange.tables.Table`; unknown keys are refused by name.  Nothing in
a project file is evaluated: it is data only.
"""
from __future__ import annotations

import re
import tomllib
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Any

from arrange.checked import MAX_DEPTH, bad_character, check_data, read_regular
from arrange.errors import ArrangeError, ProjectError
from arrange.harmony import harmonizer as harmony
from arrange.rhythm import line as rhythm
from arrange.rhythm_section.options import RhythmSectionOptions
from arrange.rhythm_section.options import read_options as read_rhythm_section
from arrange.tables import Table
from arrange.theory.pitch import parse_pitch, parse_pitches
from arrange.voicing import voicer as voicing
from arrange.voicing.sections import Section, section_from_table

if TYPE_CHECKING:      # read when a project has them (a melody file; layers)
    from arrange.inputs.melody_file import Melody
    from arrange.voicing.layers import Layer

__all__ = ["Project", "ChainSpec", "OutputSpec", "load_project", "project_from_data", "slugify",
           "FORMATS", "DEFAULT_FORMATS", "PAPERS", "SIGNATURES"]

DEFAULT_FORMATS = ("musicxml", "midi", "report", "preview")
FORMATS = (*DEFAULT_FORMATS, "pdf")          # pdf: print-ready score and parts, asked for
PAPERS = ("a4", "letter")
SIGNATURES = ("arrival", "each-statement")  # a modulating chain's signatures: at the key it arrives in, or per statement
MAX_FILE_BYTES = 1_000_000
MAX_TITLE = 120


@dataclass(frozen=True, slots=True, eq=False)
class ChainSpec:
    """The project's ``[chain]`` table: motif, statements, overlap(s), lead range."""
    motif: tuple[int, ...]
    statements: int
    overlap: int | tuple[int, ...]
    lead_range: tuple[int, int] | None


@dataclass(frozen=True, slots=True, eq=False)
class OutputSpec:
    """The project's ``[output]`` table: formats and what the files carry."""
    formats: tuple[str, ...]
    dynamics: tuple[str, ...] = ("mf",)   # one per statement; the last holds for the rest
    analysis: bool = False                # statement labels, approach techniques
    parts: bool = False                   # one MusicXML per part as well
    concert_score: bool = False           # the score at concert pitch (parts stay transposed)
    rhythm_section: bool = False          # the old switch: bass and drums ([rhythm_section] now)
    humanize: float = 0.0                 # milliseconds of seeded timing spread (0 = none)
    seed: int = 1
    audio: bool = False                   # a WAV through fluidsynth when installed
    paper: str = "a4"                     # the PDF's paper: a4 or letter
    signatures: str = "arrival"           # modulate = "by-statement": one signature until the arrival key


@dataclass(frozen=True, slots=True, eq=False)
class Project:
    """A project file read and checked: every stage's settings."""
    path: Path | None
    title: str
    slug: str
    tempo: float
    meter: rhythm.Meter
    key: harmony.Key
    chain: ChainSpec | None            # None: the project plays a melody, or a form of passages
    rhythm: rhythm.RhythmOptions
    harmony: harmony.HarmonyOptions
    section: Section
    voicing: voicing.VoicingOptions
    output: OutputSpec
    layers: tuple[Layer, ...] = ()     # [[layers]]: background sections under the lead
    style: str = ""                    # the style word over the metronome mark ("" = from groove and tempo)
    melody: Melody | None = None       # melody = "file:..." or compact text, instead of [chain]
    passages: tuple[Any, ...] = ()     # [[passages]]: a form (arrange.form.Passage values)
    rhythm_section: RhythmSectionOptions = RhythmSectionOptions()   # written piano, guitar, bass, drums


def slugify(title: str) -> str:
    """A file-name-safe slug that cannot leave the output folder."""
    slug = re.sub(r"[^a-z0-9]+", "-", title.lower()).strip("-")
    return slug[:60].strip("-") or "untitled"


def _chain(t: Table, base: Path | None = None) -> ChainSpec:
    motif_raw = t.raw("motif")
    if isinstance(motif_raw, str) and motif_raw.strip().startswith("file:"):
        from arrange.inputs.motif_file import read_motif_file

        count = t.integer("motif_length", 4, low=2, high=64)
        name = motif_raw.strip()[5:].strip()
        if not name:
            raise t.error("motif", f"{motif_raw!r} names no file",
                          "\"file:NAME.musicxml\" or \"file:NAME.mid\", relative to the project file")
        path = Path(name) if Path(name).is_absolute() else (base or Path.cwd()) / name
        motif = read_motif_file(path, count, where=t.at("motif"))
    else:
        if t.has("motif_length"):
            raise t.error("motif_length", "motif_length is given but the motif is not a file",
                          "motif_length only with motif = \"file:...\"")
        try:
            motif = parse_pitches(motif_raw, where=t.at("motif"))
        except ArrangeError as err:
            raise ProjectError(err.what, where=err.where, accepted=err.accepted) from None
    if not 2 <= len(motif) <= 64:
        raise t.error("motif", f"the motif has {len(motif)} note{'s' if len(motif) != 1 else ''}",
                      "a motif of 2 to 64 notes")
    statements = t.integer("statements", 4, low=1, high=1000)
    overlap: int | tuple[int, ...]
    raw = t.raw("overlap", 2)
    if isinstance(raw, list):
        if not all(isinstance(o, int) and not isinstance(o, bool) for o in raw):
            raise t.error("overlap", f"{raw!r} holds a value that is not a whole number",
                          "a whole number or a list of whole numbers, one per link")
        overlap = tuple(raw)
    else:
        overlap = t.integer("overlap", 2, low=1, high=max(len(motif) - 1, 1))
    lead_range = None
    lr = t.raw("lead_range", None)
    if lr is not None:
        if not isinstance(lr, list) or len(lr) != 2:
            raise t.error("lead_range", f"{lr!r}", "two pitches [LOW, HIGH], e.g. [\"F4\", \"D5\"]")
        try:
            lo, hi = (parse_pitch(x, where=t.at("lead_range")) for x in lr)
        except ArrangeError as err:
            raise ProjectError(err.what, where=err.where, accepted=err.accepted) from None
        if lo >= hi:
            raise t.error("lead_range", f"{lr!r} is empty or reversed", "LOW below HIGH")
        lead_range = (lo, hi)
    t.finish()
    return ChainSpec(motif, statements, overlap, lead_range)


def _layers(raw: object, where: str) -> tuple[Layer, ...]:
    """``[[layers]]`` (the layer stage is imported only for a project that has them)."""
    if raw is None:
        return ()
    from arrange.voicing.layers import read_layers

    return read_layers(raw, where)


def _output(t: Table) -> OutputSpec:
    raw = t.raw("formats", list(DEFAULT_FORMATS))
    if not isinstance(raw, list) or not raw:
        raise t.error("formats", f"{raw!r}", "a list drawn from " + ", ".join(FORMATS))
    for f in raw:
        if f not in FORMATS:
            raise t.error("formats", f"format {f!r} is not known", ", ".join(FORMATS))
    from arrange.theory.dynamics import DYNAMICS

    dyn = t.raw("dynamics", "mf")
    dyn_list = [dyn] if isinstance(dyn, str) else dyn
    if not isinstance(dyn_list, list) or not dyn_list or \
            any(not isinstance(d, str) or d not in DYNAMICS for d in dyn_list):
        raise t.error("dynamics", f"{dyn!r}", "a dynamic or a list of them, one per statement "
                      "(the last holds for the rest), from " + ", ".join(DYNAMICS))
    spec = OutputSpec(
        tuple(dict.fromkeys(raw)), tuple(dyn_list),
        analysis=t.boolean("analysis", False), parts=t.boolean("parts", False),
        concert_score=t.boolean("concert_score", False),
        rhythm_section=t.boolean("rhythm_section", False),
        humanize=t.number("humanize", 0.0, low=0, high=60),
        seed=t.integer("seed", 1, low=0, high=2**31 - 1), audio=t.boolean("audio", False),
        paper=t.string("paper", "a4", choices=PAPERS),
        signatures=t.string("signatures", "arrival", choices=SIGNATURES))
    t.finish()
    return spec


def project_from_data(data: dict[str, object], where: str, path: Path | None = None) -> Project:
    check_data(data, where)
    top = Table(data, where)
    title = top.string("title")
    if len(title) > MAX_TITLE or any(c in title for c in "/\\") or ".." in title \
            or bad_character(title) is not None:
        raise top.error("title", f"{title[:40]!r}{'...' if len(title) > 40 else ''} cannot be a title",
                        f"a title of at most {MAX_TITLE} characters without / \\ .. or control "
                        "characters (the output files are named from it)")
    tempo = top.number("tempo", 120, low=20, high=400)
    style = top.string("style", "")
    if len(style) > 40 or bad_character(style) is not None:
        raise top.error("style", f"{style[:40]!r} cannot be a style word",
                        "a short style word such as \"Medium Swing\" (at most 40 characters)")
    base = path.parent if path else None
    kinds = [k for k in ("chain", "melody", "passages") if top.has(k)]
    if not kinds:
        kinds = ["chain"]            # the error of a missing [chain] names the usual table
    if len(kinds) != 1:
        raise ProjectError(f"the project gives {' and '.join(repr(k) for k in kinds)}", where=where,
                           accepted="one of: a [chain] table, melody = \"file:tune.musicxml\" (or notes "
                                    "such as \"F4:4 G4:8\"), or [[passages]] (a form)")
    try:
        melody = None
        file_meter = file_key = None
        if kinds == ["melody"]:
            from arrange.material import read_melody

            bar_guess = rhythm.parse_meter(top.string("meter", "4/4"), where=top.at("meter")).bar
            melody = read_melody(top, base, bar_guess)
            file_meter, file_key = melody.meter, melody.key
        meter = _meter(top, file_meter, melody.source if melody else "")
        key = harmony.parse_key(top.string("key", file_key or "C major"), where=top.at("key"))
    except ArrangeError as err:
        raise ProjectError(err.what, where=err.where, accepted=err.accepted) from None
    chain = _chain(top.sub("chain", required=True), base) if kinds == ["chain"] else None
    rhythm_opts = rhythm.read_options(top.sub("rhythm"))
    sec_table = top.sub("section", required=True)
    section = section_from_table(sec_table)
    voicing_opts = voicing.read_options(sec_table)
    sec_table.finish()
    output = _output(top.sub("output"))
    layers = _layers(top.raw("layers", None), where)
    rs_table = top.sub("rhythm_section")
    if output.rhythm_section and rs_table.has("parts"):
        raise ProjectError("both output.rhythm_section and rhythm_section.parts are given",
                           where=f"{where}, key 'output.rhythm_section'",
                           accepted="only [rhythm_section] parts = [...] (output.rhythm_section = true "
                                    "is the old spelling of parts = [\"bass\", \"drums\"])")
    rhythm_section = read_rhythm_section(rs_table, legacy=output.rhythm_section)
    passages: tuple[Any, ...] = ()
    if kinds == ["passages"]:
        from dataclasses import replace

        from arrange.form import form_dynamics, read_passages

        passages = read_passages(top, where, base, meter, key, section, output.dynamics, _chain,
                                 len(layers))
        output = replace(output, dynamics=form_dynamics(passages))
        harmony_opts = harmony.HarmonyOptions()        # each passage has its own
    else:
        harmony_opts = _harmony(top, melody, meter, where)
    if melody is not None and not voicing_opts.allow_extreme:
        from arrange.material import check_lead_range

        check_lead_range(melody, section, top.at("melody"))
    move = top.raw("transpose", None)
    top.finish()
    project = Project(path, title, slugify(title), tempo, meter, key, chain, rhythm_opts,
                      harmony_opts, section, voicing_opts, output, layers, style.strip(), melody, passages,
                      rhythm_section=rhythm_section)
    if move is None:
        return project
    from arrange.transpose import parse_target

    at = top.at("transpose")
    return transpose_project(project, parse_target(move, where=at), where=at)


def _meter(top: Table, file_meter: str | None, source: str) -> rhythm.Meter:
    """The project's meter; a melody file's own meter where the project gives none (they must agree)."""
    if top.has("meter") and file_meter is not None:
        given = rhythm.parse_meter(top.string("meter"), where=top.at("meter"))
        theirs = rhythm.parse_meter(file_meter, where=f"melody file {source!r}")
        if (given.numerator, given.denominator) != (theirs.numerator, theirs.denominator):
            raise top.error("meter", f"meter = {str(given)!r} but the melody file {source!r} is in {file_meter}",
                            f"the file's meter {file_meter!r} (or no meter key)")
        return given
    return rhythm.parse_meter(top.string("meter", file_meter or "4/4"), where=top.at("meter"))


def _harmony(top: Table, melody: Melody | None, meter: rhythm.Meter, where: str) -> harmony.HarmonyOptions:
    """[harmony]; with a melody that brings chord symbols, those are the framework unless
    the table gives a framework or preset of its own."""
    if melody is None:
        return harmony.read_options(top.sub("harmony", required=True))
    from arrange.material import melody_harmony

    return melody_harmony(top.sub("harmony"), melody, meter, f"{where} melody")


def transpose_project(project: Project, target: int | harmony.Key, *, where: str) -> Project:
    """``project`` moved by semitones, or to a key in the octave nearest to no move that
    keeps the lead in its practical range (:mod:`arrange.transpose`)."""
    from dataclasses import replace

    from arrange.transpose import move

    c = project.chain
    if c is None:
        raise ProjectError("transpose moves a project's chain, and this project has "
                           + ("a melody" if project.melody is not None else "passages"), where=where,
                           accepted="transpose with a [chain]; a passage's melody takes transpose = SEMITONES "
                                    "in its [[passages]] entry")
    lead = project.section.lead
    moved = move(project.key, (c.motif, c.statements, c.overlap, c.lead_range), project.harmony,
                 (lead.name, lead.instrument.practical), target, where=where)
    if moved.shift == 0 and moved.key == project.key:
        return project
    return replace(project, key=moved.key, harmony=moved.harmony,
                   chain=replace(c, motif=moved.motif, lead_range=moved.lead_range))


def _long_number(text: str) -> str:
    """Where the number too long to convert is: line and key."""
    m = re.search(r"[0-9_]{100,}", text)
    if m is None:
        return "a number is too long to read"
    line_no = text.count("\n", 0, m.start()) + 1
    line = text[text.rfind("\n", 0, m.start()) + 1:m.start()]
    key = line.split("=", 1)[0].strip()[:40] if "=" in line else "?"
    return f"line {line_no}, key {key!r}: a number of {m.end() - m.start():,} digits"


def load_project(path: str | Path) -> Project:
    p = Path(path)
    if not p.is_file():
        raise ProjectError(f"project file {str(p)!r} does not exist", where=str(p),
                           accepted="the path of a .toml project file (arrange new FILE writes one)")
    raw = read_regular(p, MAX_FILE_BYTES, where=str(p), what="project file",
                       accepted="a .toml project file (arrange new FILE writes one)")
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError as err:
        raise ProjectError(f"the file is not UTF-8 text (byte {err.start})", where=str(p),
                           accepted="a UTF-8 TOML file") from None
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as err:
        raise ProjectError(f"invalid TOML: {err}", where=str(p),
                           accepted="TOML (https://toml.io), e.g. title = \"My Cue\"") from None
    except RecursionError:
        raise ProjectError("values are nested too deep to read", where=str(p),
                           accepted=f"tables and lists nested at most {MAX_DEPTH} deep") from None
    except ValueError:                         # a number past Python's 4,300-digit limit
        raise ProjectError(_long_number(text), where=str(p),
                           accepted="numbers of at most a few digits") from None
    return project_from_data(data, p.name, p.resolve())
