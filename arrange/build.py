"""The pipeline: a :class:`~arrange.project.Project` through every stage, then
the writers.  Stages return immutable values; only :func:`write_outputs`
touches the disk (through :mod:`arrange.writers.files`)."""
from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

from . import __version__
from .chain import build_chain
from .errors import ArrangeError
from .harmony import harmonize
from .project import Project
from .rhythm import lay_rhythm
from .voicing import Voiced, voice

__all__ = ["run_pipeline", "render_outputs", "write_outputs", "BuildResult"]


@dataclass(frozen=True, slots=True)
class BuildResult:
    voiced: Voiced
    files: tuple[Path, ...]


def run_pipeline(project: Project) -> Voiced:
    c = project.chain
    # no lead_range given: the chain is placed into the lead instrument's practical range
    lead_range = c.lead_range or project.section.lead.instrument.practical
    try:
        chain = build_chain(c.motif, c.statements, c.overlap, lead_range)
    except ArrangeError as err:
        raise _in_project(err, project, "chain") from None
    line = lay_rhythm(chain, project.meter, project.rhythm)
    harmonized = harmonize(line, project.key, project.harmony,
                           where=f"{project.path.name if project.path else 'project'} [harmony]")
    return voice(harmonized, project.section, project.voicing)


def _in_project(err: ArrangeError, project: Project, table: str) -> ArrangeError:
    """The same error, placed in the project file: ``p.toml, key 'chain.motif'``."""
    name = project.path.name if project.path else "project"
    where = f"{name}, key '{table}.{err.where}'" if err.where and " " not in err.where \
        else f"{name} [{table}]" + (f", {err.where}" if err.where else "")
    return type(err)(err.what, where=where, accepted=err.accepted)


def render_outputs(project: Project, voiced: Voiced, formats: tuple[str, ...]) -> dict[str, bytes]:
    """Every asked file as bytes, in memory, before anything is written."""
    files: dict[str, bytes] = {}
    slug = project.slug
    if "musicxml" in formats or "preview" in formats:
        from .writers.musicxml import ScoreInfo, musicxml_bytes

        xml = musicxml_bytes(voiced, ScoreInfo(project.title, project.tempo, _style(project)))
        if "musicxml" in formats:
            files[f"{slug}.musicxml"] = xml
    if "midi" in formats:
        from .writers.midi import midi_bytes

        files[f"{slug}.mid"] = midi_bytes(voiced, project.tempo)
    if "report" in formats:
        from .writers.report import report_data, report_json, report_markdown

        data = report_data(voiced, title=project.title, tempo=project.tempo, version=__version__)
        files[f"{slug}.report.json"] = report_json(data)
        files[f"{slug}.report.md"] = report_markdown(data)
    return files


def _style(project: Project) -> str:
    return {"straight": "Straight", "swing": "Swing", "shuffle": "Shuffle",
            "latin": "Latin"}.get(project.rhythm.groove, project.rhythm.groove.title())


def write_outputs(project: Project, out_dir: Path, formats: tuple[str, ...] | None = None) -> BuildResult:
    from .writers.files import write_batch

    voiced = run_pipeline(project)
    files = render_outputs(project, voiced, formats or project.output.formats)
    paths = write_batch(out_dir, files)
    return BuildResult(voiced, tuple(paths))
