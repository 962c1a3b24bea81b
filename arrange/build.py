"""The pipeline: a :class:`~arrange.project.Project` through every stage, then
the writers.  Stages return immutable values; only :func:`write_outputs`
touches the disk (through :mod:`arrange.writers.files`)."""
from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

from . import __version__
from .chain import build_chain
from .harmony import harmonize
from .layers import VoicedLayer, build_layers
from .project import Project
from .rhythm import lay_rhythm
from .voicing import Voiced, voice

__all__ = ["run_pipeline", "run_layers", "render_outputs", "write_outputs", "BuildResult"]


@dataclass(frozen=True, slots=True)
class BuildResult:
    voiced: Voiced
    files: tuple[Path, ...]
    layers: tuple[VoicedLayer, ...] = ()

    @property
    def warnings(self) -> int:
        return (len(self.voiced.findings) + len(self.voiced.harmonized.warnings)
                + sum(len(v.findings) for v in self.layers))


def run_pipeline(project: Project) -> Voiced:
    c = project.chain
    # no lead_range given: the chain is placed into the lead instrument's practical range
    lead_range = c.lead_range or project.section.lead.instrument.practical
    chain = build_chain(c.motif, c.statements, c.overlap, lead_range)
    line = lay_rhythm(chain, project.meter, project.rhythm)
    harmonized = harmonize(line, project.key, project.harmony,
                           where=f"{project.path.name if project.path else 'project'} [harmony]")
    return voice(harmonized, project.section, project.voicing)


def run_layers(project: Project, voiced: Voiced) -> tuple[VoicedLayer, ...]:
    """The project's [[layers]], voiced under the lead section."""
    return build_layers(voiced.harmonized, voiced, project.layers)


def render_outputs(project: Project, voiced: Voiced, formats: tuple[str, ...],
                   layers: tuple[VoicedLayer, ...] = ()) -> dict[str, bytes]:
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
    layers = run_layers(project, voiced)
    files = render_outputs(project, voiced, formats or project.output.formats, layers)
    paths = write_batch(out_dir, files)
    return BuildResult(voiced, tuple(paths), layers)
