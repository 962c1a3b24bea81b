"""Variants: one project built in every combination of a few varied keys.

``arrange build P.toml --vary voicing=close,drop2,spread --vary tempo=96,132 -o DIR``
expands on the raw TOML data: each ``--vary`` names a project key by its dotted
name (``section.voicing``, ``rhythm.swing``, ``layers.1.role``) or by a short name
(:data:`SHORT`), and a comma list of values.  Every combination is read by
:func:`arrange.project.project_from_data` and built in memory first, so an
unknown key or a bad value stops everything (exit 2, naming it) before a file
is written.  Then each combination goes into its own folder and ``DIR/variants.md``
gets a table: combination, warnings, lead span, lowest note, and a picture.
"""
from __future__ import annotations

import tomllib
from collections.abc import Callable
from copy import deepcopy
from dataclasses import dataclass
from itertools import product
from pathlib import Path
from typing import Any

from arrange.checked import whole
from arrange.errors import ArrangeError, ProjectError
from arrange.project import Project, load_project, project_from_data, slugify
from arrange.rhythm.groove import GROOVE_ONLY
from arrange.theory.pitch import pitch_name

__all__ = ["SHORT", "Vary", "parse_vary", "expand", "Variant", "build_variants", "variants_markdown",
           "MAX_VARIANTS", "processors", "workers", "start_method"]

# short names an arranger types, and the dotted key each stands for
SHORT = {
    "voicing": "section.voicing", "section": "section.name", "groove": "rhythm.groove",
    "swing": "rhythm.swing", "cell": "rhythm.cell", "framework": "harmony.framework",
    "approach": "harmony.approach", "motif": "chain.motif", "statements": "chain.statements",
    "overlap": "chain.overlap", "transpose": "transpose",
    # a varied key moves the whole project there (motif, framework, key changes), not
    # only its signature: see arrange.transpose
    "key": "transpose",
}
# keys whose value is a list: a plain word stands for a list of one (approach=dominant)
LISTS = frozenset({"harmony.approach", "output.formats"})
MAX_VARIANTS = 64


@dataclass(frozen=True, slots=True, eq=False)
class Vary:
    key: str                       # dotted key
    text: str                      # as typed, for messages
    values: tuple[str, ...]


def parse_vary(spec: str) -> Vary:
    where = f"--vary {spec!r}"
    name, eq, rest = spec.partition("=")
    name = name.strip()
    values = tuple(v.strip() for v in rest.split(","))
    if not eq or not name or not rest.strip() or any(not v for v in values):
        raise ProjectError(f"{spec!r} is not KEY=VALUE,VALUE", where=where,
                           accepted="e.g. --vary voicing=close,drop2 or --vary section.voicing=spread")
    if len(set(values)) != len(values):
        raise ProjectError(f"{spec!r} repeats a value", where=where, accepted="different values")
    key = SHORT.get(name, name)
    if "." not in key and name not in SHORT and not name.isidentifier():
        raise ProjectError(f"key {name!r} is not known", where=where, accepted=_accepted_keys())
    return Vary(key, name, values)


def _accepted_keys() -> str:
    return ("a dotted key of the project (section.voicing, rhythm.swing, tempo, layers.1.role) or "
            "a short name: " + ", ".join(f"{k} ({v})" for k, v in SHORT.items()))


def _typed(text: str, old: Any) -> Any:
    """A value typed like the one it replaces (or, for a new key, as TOML reads it)."""
    if isinstance(old, str):
        return text
    try:
        value = tomllib.loads(f"v = {text}")["v"]
    except (tomllib.TOMLDecodeError, ValueError, RecursionError):   # not TOML, or a 5,000-digit number
        return text
    if isinstance(old, float) and isinstance(value, int) and not isinstance(value, bool):
        return float(value)
    return value


def _set(data: dict[str, Any], vary: Vary, text: str) -> None:
    where = f"--vary {vary.text}={text}"
    node: Any = data
    parts = vary.key.split(".")
    for depth, seg in enumerate(parts):
        last = depth == len(parts) - 1
        if isinstance(node, list):
            if whole(seg) is None or not 1 <= int(seg) <= len(node):
                raise ProjectError(f"key {vary.key!r}: {seg!r} is not an entry of "
                                   f"{'.'.join(parts[:depth])}", where=where,
                                   accepted=f"entries 1..{len(node)}")
            if last:
                node[int(seg) - 1] = _typed(text, node[int(seg) - 1])
                return
            node = node[int(seg) - 1]
            continue
        if not isinstance(node, dict):
            raise ProjectError(f"key {vary.key!r}: {'.'.join(parts[:depth])!r} is not a table",
                               where=where, accepted=_accepted_keys())
        if last:
            value = _typed(text, node.get(seg))
            node[seg] = [value] if vary.key in LISTS and not isinstance(value, list) else value
            if vary.key == "rhythm.groove":
                _drop_groove_options(node, node[seg])
            return
        node = node.setdefault(seg, {})


def _drop_groove_options(rhythm: dict[str, Any], groove: object) -> None:
    """A varied groove drops the [rhythm] keys of other grooves (the project's swing
    ratio means nothing to a latin variant)."""
    for key, owner in GROOVE_ONLY.items():
        if key in rhythm and groove != owner:
            del rhythm[key]


@dataclass(frozen=True, slots=True, eq=False)
class Variant:
    name: str                                # "voicing=close, tempo=96"
    folder: str                              # a slug, unique
    project: Project


def expand(data: dict[str, Any], varies: list[Vary], where: str, path: Path | None) -> list[Variant]:
    """Every combination, read as a project; errors name the --vary that caused them."""
    keys = [v.key for v in varies]
    if len(set(keys)) != len(keys):
        raise ProjectError(f"the key {next(k for k in keys if keys.count(k) > 1)!r} is varied twice",
                           where="--vary", accepted="each key once")
    count = 1
    for v in varies:
        count *= len(v.values)
    if count > MAX_VARIANTS:
        raise ProjectError(f"{count} combinations", where="--vary",
                           accepted=f"at most {MAX_VARIANTS} combinations")
    # each value alone first, so the error names the one value that is wrong
    for v in varies:
        for text in v.values:
            one = deepcopy(data)
            _set(one, v, text)
            _read(one, where, path, f"--vary {v.text}={text}")
    out, seen = [], set()
    for combo in product(*(v.values for v in varies)):
        one = deepcopy(data)
        for v, text in zip(varies, combo, strict=True):
            _set(one, v, text)
        name = ", ".join(f"{v.text}={t}" for v, t in zip(varies, combo, strict=True))
        folder = slugify("_".join(f"{v.text}-{t}" for v, t in zip(varies, combo, strict=True)))
        while folder in seen:
            folder += "-x"
        seen.add(folder)
        out.append(Variant(name, folder, _read(one, where, path, f"--vary {name}")))
    return out


def _read(data: dict[str, Any], where: str, path: Path | None, vary_where: str) -> Project:
    try:
        return project_from_data(data, where, path)
    except ArrangeError as err:
        raise ProjectError(f"{err.what} (at {err.where})" if err.where else err.what,
                           where=vary_where, accepted=err.accepted) from None


def build_variants(project_path: Path, specs: tuple[str, ...], out_dir: Path,
                   formats: tuple[str, ...] | None = None,
                   adjust: Callable[[Project], Project] | None = None,
                   jobs: int | None = None) -> list[Path]:
    """Build every combination into ``out_dir/<folder>/`` and write ``variants.md``;
    ``jobs``: worker processes (None: one per processor, see :func:`workers`)."""
    from arrange.writers.files import write_sets

    varies = [parse_vary(s) for s in specs]
    load_project(project_path)                 # the file itself is sound before anything is varied
    p = Path(project_path)
    data = tomllib.loads(p.read_text(encoding="utf-8"))
    variants = expand(data, varies, p.name, p.resolve())
    if adjust is not None:                     # the command line's own flags (--parts, ...)
        variants = [Variant(v.name, v.folder, adjust(v.project)) for v in variants]
    from arrange.build import check_size

    counted = 0
    for var in variants:                       # every combination counts toward the limits
        counted += check_size(var.project, where=f"--vary {var.name}", already=counted)
    # everything in memory before a file is written
    rendered = _render_all(variants, formats, workers(len(variants), jobs))
    for var, (error, _row_data, _files) in zip(variants, rendered, strict=True):
        if error is not None:                  # the first combination in order that failed
            cls, what, where, accepted = error
            raise cls(what, where=f"--vary {var.name}: {where or ''}".rstrip(": "), accepted=accepted)
    rows = [row for _error, row, _files in rendered]
    sets = [(out_dir / var.folder, files) for var, (_e, _r, files) in zip(variants, rendered, strict=True)]
    sets.append((out_dir, {"variants.md": variants_markdown(p.name, varies, rows)}))
    written = write_sets(out_dir, sets)            # every folder and variants.md, all or nothing
    return written


# the combinations a worker process reads (inherited when it is forked, handed to it
# once when it is spawned: :func:`_worker_start`)
_JOBS: tuple[list[Variant], tuple[str, ...] | None] = ([], None)

_Rendered = tuple[tuple[type, str, str | None, str | None] | None, dict[str, Any], dict[str, bytes]]


def _render_one(i: int) -> _Rendered:
    """Combination ``i`` of :data:`_JOBS` built in memory: (error or None, its
    ``variants.md`` row, its files, the preview's PNG left out: :func:`_add_pngs`)."""
    from arrange.build import render_project

    var, formats = _JOBS[0][i], _JOBS[1]
    try:
        voiced, layers, files = render_project(var.project, formats, png=False)
    except ArrangeError as err:
        return (type(err), err.what, err.where, err.accepted), {}, {}
    return None, _row(var, voiced, layers, files), files


def _png_of(svg: bytes) -> bytes:
    from arrange.writers.preview import png_bytes

    return png_bytes(svg)


def processors() -> int:
    """The processors this process may run on (its affinity where the platform says it,
    else every processor of the machine)."""
    import os

    try:
        return len(os.sched_getaffinity(0))
    except (AttributeError, OSError):
        return os.cpu_count() or 1


def workers(combinations: int, jobs: int | None = None) -> int:
    """How many processes build ``combinations``: ``jobs`` (``--jobs``) or one per
    :func:`processors`, never more than there are combinations; 1 builds them in this
    process."""
    if jobs is not None and jobs < 1:
        raise ValueError(f"jobs {jobs} < 1")  # the command line refuses it first
    return max(1, min(combinations, jobs if jobs is not None else processors()))


def start_method() -> str:
    """``fork`` where the platform has it (the workers start with the parent's modules
    and combinations, nothing re-imported or sent), else ``spawn``."""
    import multiprocessing

    return "fork" if "fork" in multiprocessing.get_all_start_methods() else "spawn"


def _render_all(variants: list[Variant], formats: tuple[str, ...] | None,
                count: int = 1) -> list[_Rendered]:
    """Every combination built in memory, in order.  Each is independent of the others
    and most of each one's time is its own preview (verovio's layout and the PNG), so
    with ``count`` > 1 the combinations are shared among that many worker processes
    (:mod:`arrange.workers`, started by :func:`start_method`); the results, rows and file
    bytes, come back in combination order whichever worker finishes first.  With 1, one
    after another in this process.  The PNGs are drawn last, once per distinct picture
    (:func:`_add_pngs`)."""
    global _JOBS
    _JOBS = (variants, formats)
    try:
        if count > 1:
            import gc

            from arrange.workers import WorkerLost, Workers

            method = start_method()
            if method == "fork":
                # the writers, verovio, resvg and mido are imported here, before the
                # workers are forked, so that they start with them instead of each paying
                # for them again; frozen, those objects stay out of the workers' garbage
                # collections and their memory pages stay shared
                _preload(formats or ())
                gc.collect()
                gc.freeze()
            start: tuple[Callable[..., None] | None, tuple[Any, ...]] = (
                (None, ()) if method == "fork" else (_worker_start, (variants, formats)))
            try:
                with Workers(count, method, *start) as pool:
                    rendered = pool.map(_render_one, range(len(variants)))
                    return _add_pngs(variants, rendered, lambda svgs: pool.map(_png_of, svgs))
            except WorkerLost as err:
                raise WorkerLost(f"{err}; nothing was written (--jobs 1 builds every combination "
                                 "in this process)") from None
            finally:
                if method == "fork":
                    gc.unfreeze()
        rendered = [_render_one(i) for i in range(len(variants))]
        return _add_pngs(variants, rendered, lambda svgs: [_png_of(s) for s in svgs])
    finally:
        _JOBS = ([], None)


def _add_pngs(variants: list[Variant], rendered: list[_Rendered],
              draw: Callable[[list[bytes]], list[bytes]]) -> list[_Rendered]:
    """Each combination's preview PNG beside its SVG, as a build of it alone writes it,
    and its row's picture.  Combinations that differ only where the score does not show
    (a swing ratio, the MIDI's humanizing) have the same SVG, byte for byte, so the same
    PNG: each distinct SVG is drawn once (``draw``: SVGs -> PNGs, in order)."""
    from arrange.writers.preview import have_png

    pictures: dict[bytes, int] = {}
    if have_png():
        for var, (error, _row_data, files) in zip(variants, rendered, strict=True):
            svg = files.get(f"{var.project.slug}.svg")
            if error is None and svg is not None:
                pictures.setdefault(svg, len(pictures))
    pngs = draw(list(pictures)) if pictures else []
    out: list[_Rendered] = []
    for var, (error, row, files) in zip(variants, rendered, strict=True):
        slug = var.project.slug
        svg = files.get(f"{slug}.svg")
        if svg is not None and svg in pictures:
            placed: dict[str, bytes] = {}
            for key, value in files.items():       # the PNG right after its SVG, as a build writes them
                placed[key] = value
                if key == f"{slug}.svg":
                    placed[f"{slug}.png"] = pngs[pictures[svg]]
            files = placed
        if error is None:
            row = {**row, "picture": _picture(slug, files)}
        out.append((error, row, files))
    return out


def _preload(formats: tuple[str, ...]) -> None:
    """The modules every combination's writers import (``formats`` empty: the projects'
    own formats, the preview among them)."""
    import arrange.writers.midi
    import arrange.writers.musicxml
    import arrange.writers.report  # noqa: F401

    if not formats or "preview" in formats:
        from arrange.writers import preview

        preview.have_png()                     # imports resvg-py where it is installed
        try:
            import verovio  # noqa: F401
        except ImportError:                    # the combinations say so, one by one
            pass


def _worker_start(variants: list[Variant], formats: tuple[str, ...] | None) -> None:
    """A spawned worker: the combinations, sent to it once (a forked one inherits them)."""
    global _JOBS
    _JOBS = (variants, formats)


def _row(var: Variant, voiced: Any, layers: Any, files: dict[str, bytes]) -> dict[str, Any]:
    leads = [n.pitch for n in voiced.harmonized.line.notes]
    lo, hi = min(leads), max(leads)
    warnings = (len(voiced.findings) + len(voiced.harmonized.warnings)
                + sum(len(v.findings) for v in layers))
    low, part = None, ""
    for ve in voiced.events:
        for k, pitch in enumerate(ve.pitches):
            if pitch is not None and (low is None or pitch < low):
                low, part = pitch, voiced.section.parts[k].name
    for vl in layers:
        for n in vl.notes:
            for k, pitch in enumerate(n.pitches):
                if pitch is not None and (low is None or pitch < low):
                    low, part = pitch, vl.layer.section.parts[k].name
    slug = var.project.slug
    score = f"{slug}.musicxml" if f"{slug}.musicxml" in files else None
    return {"name": var.name, "folder": var.folder, "warnings": warnings,
            "span": f"{pitch_name(lo)}-{pitch_name(hi)} ({hi - lo} semitones)",
            "lowest": f"{pitch_name(low)} ({part})" if low is not None else "-",
            "picture": _picture(slug, files), "score": score}


def _picture(slug: str, files: dict[str, bytes]) -> str | None:
    return next((f"{slug}.{ext}" for ext in ("png", "svg") if f"{slug}.{ext}" in files), None)


def variants_markdown(source: str, varies: list[Vary], rows: list[dict[str, Any]]) -> bytes:
    out = [f"# Variants of {source}", "",
           "Varied: " + "; ".join(f"`{v.key}` = {', '.join(v.values)}" for v in varies) + ".", "",
           "| combination | folder | warnings | lead span | lowest note | preview |",
           "| --- | --- | --- | --- | --- | --- |"]
    for r in rows:
        if r["picture"]:
            pic = f"![{r['name']}]({r['folder']}/{r['picture']})"
        elif r["score"]:
            pic = f"no preview written: [score]({r['folder']}/{r['score']})"
        else:
            pic = "no preview or score written"
        out.append(f"| {r['name']} | [{r['folder']}]({r['folder']}/) | {r['warnings']} | {r['span']} | "
                   f"{r['lowest']} | {pic} |")
    return ("\n".join(out) + "\n").encode("utf-8")
