"""The command line.  Only this module talks to the terminal.

Exit codes: 0 success, 2 bad input (one-line message), 1 internal fault
(short message; ``--debug`` shows the traceback), 130/143 after Ctrl-C/SIGTERM
(see :mod:`arrange.exits`).

The parser is the standard library's ``argparse`` (:class:`arrange.exits.OneLineParser`).
Each command is a function declared with :func:`command`, its options and arguments with
:func:`option` (the arguments of ``ArgumentParser.add_argument``, read by ``argparse``
itself); :func:`parser` builds the parser, :func:`main` runs one command line.
"""
from __future__ import annotations

import argparse
import sys
from collections.abc import Callable, Sequence
from pathlib import Path
from typing import Any, NoReturn, TypeVar

from arrange import __version__
from arrange.errors import ArrangeError

F = TypeVar("F", bound=Callable[..., Any])


class _State:
    debug = False


def echo(text: str = "", *, err: bool = False, nl: bool = True) -> None:
    """Write ``text`` (and a line break) to stdout, or stderr with ``err``, and flush, so a
    closed pipe is seen at once (``arrange chain ... | head``)."""
    stream = sys.stderr if err else sys.stdout
    stream.write(f"{text}\n" if nl else text)
    stream.flush()


def _fail(err: BaseException) -> None:
    from arrange.exits import one_line

    if isinstance(err, ArrangeError):
        echo(f"arrange: error: {one_line(str(err))}", err=True)
        sys.exit(2)
    if _State.debug:
        import traceback

        traceback.print_exc()
    else:
        echo(f"arrange: internal error: {one_line(f'{type(err).__name__}: {err}')} "
             "(run with --debug for the traceback)", err=True)
    sys.exit(1)


def guarded(fn: F) -> F:
    import functools

    @functools.wraps(fn)
    def wrapper(*args: Any, **kwargs: Any) -> Any:
        try:
            return fn(*args, **kwargs)
        except BrokenPipeError:
            # the reader went away (``arrange chain ... | head``): stop quietly
            import os

            devnull = os.open(os.devnull, os.O_WRONLY)
            os.dup2(devnull, sys.stdout.fileno())
            sys.exit(0)
        except Exception as err:  # noqa: BLE001 - the one place faults are turned into exits
            _fail(err)
    return wrapper  # type: ignore[return-value]


# ------------------------------------------------------------------ declaring commands

SUMMARY = ("Grow a motif into an RI chain, harmonize and voice it for a section, "
           "and write a MusicXML score, a MIDI mock-up and a report.")


class Command:
    """One command: its function, the summary ``arrange --help`` lists, and the arguments
    of ``add_argument`` for each of its options and arguments, in the order ``--help``
    shows them."""

    __slots__ = ("name", "fn", "summary", "options")

    def __init__(self, fn: Callable[..., Any], summary: str,
                 options: list[tuple[tuple[str, ...], dict[str, Any]]]) -> None:
        self.name = fn.__name__
        self.fn = fn
        self.summary = summary
        self.options = options


COMMANDS: dict[str, Command] = {}


def option(*flags: str, **kw: Any) -> Callable[[F], F]:
    """An option or argument of the command below: the arguments of
    ``argparse.ArgumentParser.add_argument``."""
    def mark(fn: F) -> F:
        fn.__dict__.setdefault("cli_options", []).insert(0, (flags, kw))
        return fn
    return mark


def command(summary: str) -> Callable[[F], F]:
    """The function below is the command of its name; ``summary`` is its line in
    ``arrange --help`` (its docstring's first paragraph is its own ``--help``)."""
    def mark(fn: F) -> F:
        COMMANDS[fn.__name__] = Command(fn, summary, fn.__dict__.get("cli_options", []))
        return fn
    return mark


def _whole(text: str) -> int:
    """A whole number option read by :func:`arrange.checked.signed`: ASCII digits only, at
    most nine, an optional sign (Python's ``int`` would take "\u0663" or other scripts'
    digits, and numbers of thousands of digits)."""
    from arrange.checked import MAX_DIGITS, signed
    from arrange.exits import one_line

    n = signed(text)
    if n is not None:
        return n
    raise argparse.ArgumentTypeError(f"{one_line(repr(text))} is not a whole number: ASCII digits 0-9 "
                                     f"(at most {MAX_DIGITS}), e.g. 4")


_whole.__name__ = "whole number"
WHOLE = _whole


def _jobs(text: str) -> int:
    """``--jobs``: a count of worker processes, 1 or more (ASCII digits, as :func:`_whole`)."""
    from arrange.checked import whole
    from arrange.exits import one_line

    n = whole(text)
    if n is not None and n >= 1:
        return n
    raise argparse.ArgumentTypeError(f"{one_line(repr(text))} is not a number of worker processes: "
                                     "a whole number 1 or more (1 builds the combinations in this "
                                     "process), e.g. 2")


_jobs.__name__ = "number of worker processes"


def _file(text: str) -> Path:
    """A file name (the file need not exist yet); an existing folder is refused."""
    path = Path(text)
    if path.is_dir():
        raise argparse.ArgumentTypeError(f"{text!r} is a folder, not a file")
    return path


def _folder(text: str) -> Path:
    """A folder name (the folder need not exist yet); an existing file is refused."""
    path = Path(text)
    if path.exists() and not path.is_dir():
        raise argparse.ArgumentTypeError(f"{text!r} is a file, not a folder")
    return path


_BOOL = argparse.BooleanOptionalAction      # --parts / --no-parts
_file.__name__ = "file name"
_folder.__name__ = "folder name"


def _overlaps(text: str | None) -> tuple[int, ...] | None:
    if text is None:
        return None
    out = []
    for i, tok in enumerate(text.replace(" ", "").split(","), start=1):
        from arrange.checked import signed

        if signed(tok) is None:
            from arrange.errors import ChainError
            raise ChainError(f"{tok!r} (value {i} of --overlaps) is not a whole number",
                             where="--overlaps", accepted="whole numbers separated by commas, e.g. 2,3,2")
        out.append(int(tok))
    return tuple(out)


def _with_default(text: str) -> str:
    return f"{text}  [default: %(default)s]"


def parser(only: Sequence[str] | None = None) -> argparse.ArgumentParser:
    """The ``argparse`` parser of the whole command line.  With ``only``, the options of
    the other commands are left out (they are still listed by ``arrange --help``)."""
    return _build(only)[0]


def command_options() -> dict[str, list[argparse.Action]]:
    """Each command's options and arguments as ``argparse`` itself holds them (the
    ``Action`` objects ``add_argument`` returns: ``option_strings``, ``help``, ...)."""
    return _build(None)[1]


def _build(only: Sequence[str] | None) -> tuple[argparse.ArgumentParser, dict[str, list[argparse.Action]]]:
    from arrange.exits import OneLineParser

    def fmt(prog: str) -> argparse.HelpFormatter:
        return argparse.HelpFormatter(prog, max_help_position=30)

    top = OneLineParser(prog="arrange", description=SUMMARY, add_help=False, allow_abbrev=False,
                        formatter_class=fmt)
    top.add_argument("-h", "--help", action="help", help="Show this message and exit.")
    top.add_argument("--version", action="version", version=f"arrange, version {__version__}",
                     help="Show the version and exit.")
    top.add_argument("--debug", action="store_true", help="Show the traceback of an internal fault.")
    subs = top.add_subparsers(title="commands", dest="command", metavar="COMMAND",
                              parser_class=OneLineParser)
    actions: dict[str, list[argparse.Action]] = {}
    for name, cmd in sorted(COMMANDS.items()):
        sub = subs.add_parser(name, help=cmd.summary, description=_doc(cmd.fn), add_help=False,
                              allow_abbrev=False, formatter_class=fmt)
        if only is not None and name not in only:
            continue
        actions[name] = [sub.add_argument(*flags, **kw) for flags, kw in cmd.options]
        actions[name].append(sub.add_argument("-h", "--help", action="help",
                                              help="Show this message and exit."))
    return top, actions


def _doc(fn: Callable[..., Any]) -> str:
    return " ".join((fn.__doc__ or "").split("\n\n", 1)[0].split())


def _values_joined(args: list[str], name: str | None) -> list[str]:
    """An option of command ``name`` that takes one value takes the next word whatever it
    starts with (``--steps -3,4``, as with click before): such pairs are joined as
    ``--steps=-3,4``, which ``argparse`` would otherwise read as an unknown option (it takes
    a plain negative number, ``--transpose -3``, as a value by itself)."""
    takes: dict[str, str] = {}
    for cmd in [COMMANDS[name]] if name is not None else []:
        for flags, kw in cmd.options:
            if flags[0].startswith("-") and kw.get("action") in (None, "append") and kw.get("nargs") is None:
                long = next((f for f in flags if f.startswith("--")), flags[0])
                takes.update(dict.fromkeys(flags, long))
    out: list[str] = []
    i = 0
    while i < len(args):
        a = args[i]
        if a == "--":
            out += args[i:]
            break
        if a in takes and i + 1 < len(args) and args[i + 1].startswith("-") and args[i + 1] != "--":
            out.append(f"{takes[a]}={args[i + 1]}")
            i += 2
            continue
        out.append(a)
        i += 1
    return out


def main(argv: Sequence[str] | None = None) -> NoReturn:
    """Run one command line (``argv``, default ``sys.argv[1:]``) and exit (always raises
    ``SystemExit``: 0, 1, 2, 130 or 143, see :mod:`arrange.exits`)."""
    from arrange.exits import run

    args = list(sys.argv[1:] if argv is None else argv)
    run(lambda: _dispatch(args))


def _dispatch(args: list[str]) -> None:
    from arrange.exits import UsageError

    name = next((a for a in args if not a.startswith("-")), None)
    top = parser(only=[name] if name in COMMANDS else [])
    args = _values_joined(args, name if name in COMMANDS else None)
    ns, extra = top.parse_known_args(args)
    name = ns.command
    if name is None and not extra:
        raise UsageError("arrange", "no command given", f"one of {', '.join(sorted(COMMANDS))} "
                         "(see 'arrange --help')")
    if extra:
        where = f"arrange {name}"
        if name is None or args.index(extra[0]) < args.index(name):
            where = "arrange"
        what = (f"no such option: {extra[0]!r}" if extra[0].startswith("-")
                else f"unexpected argument {extra[0]!r}")
        raise UsageError(where, what + _close_match(extra[0], name if where != "arrange" else None))
    _State.debug = ns.debug
    kwargs = {k: v for k, v in vars(ns).items() if k not in ("command", "debug")}
    COMMANDS[name].fn(**kwargs)


def _close_match(word: str, name: str | None) -> str:
    """`` (did you mean --json?)`` when an option of the command is close to ``word``."""
    if not word.startswith("-"):
        return ""
    import difflib

    opts = ["-h", "--help", "--version", "--debug"] if name is None else ["-h", "--help"]
    if name is not None:
        for flags, kw in COMMANDS[name].options:
            opts += [f for f in flags if f.startswith("-")]
            if kw.get("action") is _BOOL:
                opts += [f"--no-{f[2:]}" for f in flags if f.startswith("--")]
    near = difflib.get_close_matches(word.split("=", 1)[0], opts, n=3)
    return f" (did you mean {' or '.join(near)}?)" if near else ""


# Short options mean one thing in every command: -o is the output folder (build, demo),
# -k the statements, -n the motif's length.  --overlap has no short form: -o was taken.
@command("Grow a motif into an RI chain and print it.")
@option("motif", metavar="MOTIF", help='The motif: pitch names or MIDI numbers, e.g. "C4 E4 D4 G4".')
@option("-k", "--statements", default=4, type=WHOLE, metavar="K",
        help=_with_default("How many statements (1..1000)."))
@option("--overlap", default=None, type=WHOLE, metavar="N", help="Notes shared by each link (default 2).")
@option("--overlaps", default=None, metavar="N,N,...", help="One overlap per link, e.g. 2,3,2.")
@option("--lead-range", nargs=2, default=None, metavar=("LOW", "HIGH"),
        help="Concert range to place the line in, e.g. F4 D5.")
@option("--json", dest="as_json", action="store_true", help="Print one JSON object.")
@guarded
def chain(motif: str, statements: int, overlap: int | None, overlaps: str | None,
          lead_range: tuple[str, str] | None, as_json: bool) -> None:
    """Grow MOTIF (e.g. "C4 E4 D4 G4" or "60 64 62 67") into an RI chain."""
    from arrange.chain.core import build_chain
    from arrange.errors import ChainError
    from arrange.theory.pitch import parse_pitch, parse_pitches

    notes = parse_pitches(motif, where="MOTIF")
    if overlap is not None and overlaps is not None:
        raise ChainError("both --overlap and --overlaps given", where="command line",
                         accepted="one of them")
    ov: int | tuple[int, ...] = _overlaps(overlaps) or (overlap if overlap is not None else 2)
    rng = None
    if lead_range:
        lo = parse_pitch(lead_range[0], where="--lead-range LOW")
        hi = parse_pitch(lead_range[1], where="--lead-range HIGH")
        if lo >= hi:
            raise ChainError(f"--lead-range {lead_range[0]} {lead_range[1]} is empty or reversed",
                             where="--lead-range", accepted="LOW below HIGH, e.g. F4 D5")
        rng = (lo, hi)
    c = build_chain(notes, statements, ov, rng)
    if as_json:
        import json

        echo(json.dumps(c.to_json()))
        return
    echo(_chain_table(c))


def _chain_table(c: Any) -> str:
    from arrange.theory.pitch import pitch_name

    lines = [f"motif      {' '.join(pitch_name(p) for p in c.motif)}",
             f"overlaps   {', '.join(map(str, c.overlaps)) or '-'}",
             "",
             "stmt  form  transp  start  pitches"]
    for s in c.statements:
        names = " ".join(pitch_name(p) for p in s.pitches)
        lines.append(f"{s.index:>4}  {s.form:<4}  {s.transposition:>+6}  {s.start + 1:>5}  {names}"
                     + ("  (by pitch class)" if s.link == "pitch-class" else ""))
    lines += ["",
              f"line       {' '.join(c.names)}"]
    if c.pitches != c.raw_pitches:
        lines.append(f"raw line   {' '.join(pitch_name(p) for p in c.raw_pitches)}")
    lo, hi = c.span
    lines += [f"length     {c.length} notes",
              f"compass    {c.compass_after_two:+d} semitones after two statements",
              f"transp.    statement 3 lies {c.transposition:+d} semitones from statement 1",
              f"span       {pitch_name(lo)}..{pitch_name(hi)} ({hi - lo} semitones)",
              f"pitch cl.  {c.pitch_classes} of 12"
              + (f", aggregate complete at note {c.aggregate_at}" if c.aggregate_at else "")]
    return "\n".join(lines)


@command("Build a project into score, MIDI, report and preview.")
@option("project", type=_file, metavar="PROJECT", help="The project file (TOML).")
@option("-o", "--out", dest="out_dir", default=Path("out"), type=_folder, metavar="DIR",
        help=_with_default("Output folder."))
@option("--formats", default=None, metavar="LIST", help="Comma list: musicxml,midi,report,preview,pdf.")
@option("--parts", action=_BOOL, default=None, help="Also write one MusicXML file per part.")
@option("--pdf", dest="pdf", action="store_true", default=False,
        help="Also write print-ready PDFs: the score, and each part in DIR/<slug>-parts/.")
@option("--paper", choices=["a4", "letter"], default=None, help="The PDF's paper (default a4).")
@option("--analysis", action=_BOOL, default=None,
        help="Statement labels and approach techniques on the score.")
@option("--audio", action=_BOOL, default=None,
        help="Also render a WAV through fluidsynth (when installed).")
@option("--vary", dest="vary", action="append", default=None, metavar="KEY=V1,V2",
        help="Build every combination into its own folder, with DIR/variants.md "
        "(e.g. voicing=close,drop2; repeatable).")
@option("--jobs", dest="jobs", default=None, type=_jobs, metavar="N",
        help="With --vary: build the combinations in N worker processes (default: one per "
        "processor, at most one per combination; 1 builds them in this process).")
@option("--transpose", dest="move", default=None, metavar="SEMITONES|KEY",
        help='Move the whole project: by semitones (-3, +5), or to a key ("Ab major", '
        "in the octave that keeps the lead in range).")
@guarded
def build(project: Path, out_dir: Path, formats: str | None, parts: bool | None,
          analysis: bool | None, audio: bool | None, vary: Sequence[str] | None = None,
          move: str | None = None, pdf: bool = False, paper: str | None = None,
          jobs: int | None = None) -> None:
    """Build PROJECT.toml into score, MIDI and report files in the output folder."""
    vary = tuple(vary or ())
    from arrange.project import load_project

    def adjust(pr: Any) -> Any:
        if move is not None:
            from arrange.project import transpose_project
            from arrange.transpose import parse_target

            pr = transpose_project(pr, parse_target(move, where="--transpose"), where="--transpose")
        pr = _with_flags(pr, parts, analysis, audio)
        return _with_print(pr, pdf, paper)

    proj = adjust(load_project(project))
    fmts = _formats(formats)
    if pdf and fmts is not None and "pdf" not in fmts:
        fmts = (*fmts, "pdf")
    if vary:
        from arrange.variants import build_variants

        echo(f"{proj.title}: every combination of {len(vary)} varied keys ...", err=True)
        for p in build_variants(project, vary, out_dir, fmts, adjust=adjust, jobs=jobs):
            echo(str(p))
        return
    _build_one(proj, out_dir, fmts, label=proj.title)


def _formats(formats: str | None) -> tuple[str, ...] | None:
    from arrange.errors import OutputError
    from arrange.project import FORMATS

    if formats is None:
        return None
    fmts = tuple(f.strip() for f in formats.split(",") if f.strip())
    bad = [f for f in fmts if f not in FORMATS]
    if bad or not fmts:
        raise OutputError(f"format {bad[0] if bad else formats!r} is not known", where="--formats",
                          accepted=", ".join(FORMATS))
    return fmts


def _with_print(proj: Any, pdf: bool, paper: str | None) -> Any:
    """``--pdf`` adds ``pdf`` to the project's formats; ``--paper`` sets its paper."""
    from dataclasses import replace

    out = proj.output
    if pdf and "pdf" not in out.formats:
        out = replace(out, formats=(*out.formats, "pdf"))
    if paper is not None:
        out = replace(out, paper=paper)
    return replace(proj, output=out) if out is not proj.output else proj


def _with_flags(proj: Any, parts: bool | None, analysis: bool | None, audio: bool | None) -> Any:
    from dataclasses import replace

    out = proj.output
    changes = {k: v for k, v in (("parts", parts), ("analysis", analysis), ("audio", audio))
               if v is not None}
    return replace(proj, output=replace(out, **changes)) if changes else proj


def _build_one(proj: Any, out_dir: Path, fmts: tuple[str, ...] | None, *, label: str) -> None:
    """Run the pipeline and the writers, saying on stderr what is being done."""
    from arrange.build import write_outputs

    err = sys.stderr.isatty()

    def say(stage: str) -> None:
        back = "\r" if err and stage != "voicing" else ""
        echo(f"{back}{label}: {stage} ...", err=True, nl=not err)

    notes: list[str] = []
    result = write_outputs(proj, out_dir, fmts, notes, progress=say)
    if err:
        echo("\r" + " " * 60 + "\r", err=True, nl=False)   # clear the progress line
    for p in result.files:
        echo(str(p))
    for note in notes:
        echo(f"arrange: {note}", err=True)
    echo(f"{label}: {summary_line(result, out_dir)}", err=True)


def summary_line(result: Any, out_dir: Path) -> str:
    """``6 files in out; 0 errors, 2 warnings; report: out/cue.report.md``."""
    errors, warnings = result.severities
    n = len(result.files)
    report = result.report_path()
    where = f"report: {report}" if report is not None else "no report written (--formats report)"
    return (f"{n} file{'s' if n != 1 else ''} in {out_dir}; "
            f"{errors} error{'s' if errors != 1 else ''}, {warnings} warning{'s' if warnings != 1 else ''}; "
            f"{where}")


def demo_dir() -> Path:
    from arrange.voicing.sections import _find

    return _find("demo_projects")


@command("Build every bundled demo project.")
@option("-o", "--out", dest="out_dir", default=Path("out"), type=_folder, metavar="DIR",
        help=_with_default("Output folder."))
@option("--parts", action=_BOOL, default=None, help="Also write one MusicXML file per part.")
@option("--analysis", action=_BOOL, default=None, help="Analysis labels on the scores.")
@option("--audio", action=_BOOL, default=None, help="Also render WAVs (when fluidsynth is installed).")
@option("--pdf", dest="pdf", action="store_true", default=False,
        help="Also write print-ready PDFs of scores and parts.")
@guarded
def demo(out_dir: Path, parts: bool | None, analysis: bool | None, audio: bool | None,
         pdf: bool = False) -> None:
    """Build every bundled demo project into the output folder."""
    from arrange.project import load_project

    projects = sorted(demo_dir().glob("*.toml"))
    for i, path in enumerate(projects, start=1):
        proj = _with_print(_with_flags(load_project(path), parts, analysis, audio), pdf, None)
        _build_one(proj, out_dir, None, label=f"[{i}/{len(projects)}] {path.stem}")


@command("List the sections you can voice for, with their ranges.")
@option("--json", dest="as_json", action="store_true", help="Print JSON.")
@guarded
def sections(as_json: bool) -> None:
    """List the sections in voicing_rules/ with their parts and ranges."""
    from arrange.theory.pitch import pitch_name
    from arrange.voicing.sections import sections as all_sections

    table = all_sections()
    if as_json:
        import json

        echo(json.dumps({
            name: {"description": s.description,
                   "parts": [{"name": p.name, "instrument": p.instrument.key,
                              "transposition": p.instrument.transposition,
                              "range": list(p.instrument.practical),
                              "extreme": list(p.instrument.extreme)} for p in s.parts]}
            for name, s in table.items()}))
        return
    for name, s in table.items():
        echo(f"{name}: {s.description}")
        for p in s.parts:
            lo, hi = p.instrument.practical
            echo(f"    {p.name:<18} {p.instrument.key:<16} {pitch_name(lo)}-{pitch_name(hi)} "
                       f"sounding, written {p.instrument.transposition:+d}")
    echo(_limits_text())


def _limits_text() -> str:
    """The low-interval limits every section is voiced with (voicing_rules/limits.toml)."""
    from arrange.theory.pitch import pitch_name
    from arrange.voicing.sections import INTERVAL_NAMES, low_interval_table

    lines = ["low-interval limits: the lowest note the lower of two adjacent voices takes "
             "(sounding)"]
    for semis, low in enumerate(low_interval_table()):
        if low >= 0 and semis < len(INTERVAL_NAMES):
            lines.append(f"    {INTERVAL_NAMES[semis]:<18} {pitch_name(low)} and above")
    return "\n".join(lines)




def starter_text(name: str) -> str:
    from arrange.starter import starter_text as text

    return text(name)


@command("Write a commented starter project to build first.")
@option("project", type=_file, metavar="PROJECT", help="The project file to write (a new name).")
@guarded
def new(project: Path) -> None:
    """Write a commented starter PROJECT.toml (never over an existing file)."""
    from arrange.errors import OutputError
    from arrange.writers.files import write_batch

    if project.exists():
        raise OutputError(f"{str(project)!r} already exists", where="PROJECT",
                          accepted="a new file name")
    write_batch(project.parent if str(project.parent) else Path("."),
                {project.name: starter_text(project.name).encode("utf-8")})
    echo(str(project))


@command("Explain the trade terms the tool uses, with examples.")
@option("term", nargs="?", default=None, metavar="TERM", help='One term, e.g. "drop 2" (default: every term).')
@option("--json", dest="as_json", action="store_true", help="Print a JSON list of the entries.")
@guarded
def explain(term: str | None, as_json: bool) -> None:
    """Explain TERM (or every trade term the tool uses), each with an example line taken
    from the tool's own output."""
    from arrange.errors import InputError
    from arrange.glossary import TERMS, find_term

    terms = TERMS
    if term is not None:
        found = find_term(term)
        if found is None:
            raise InputError(f"{term!r} is not in the glossary", where="TERM",
                             accepted=", ".join(t.term for t in TERMS))
        terms = (found,)
    entries: list[dict[str, Any]] = [{"term": t.term, "aliases": list(t.aliases), "meaning": t.meaning,
                "example": _example(t), "example_from": t.example_from} for t in terms]
    if as_json:
        import json

        echo(json.dumps(entries))
        return
    import textwrap

    for i, e in enumerate(entries):
        also = f" (also: {', '.join(e['aliases'])})" if e["aliases"] else ""
        echo(("\n" if i else "") + f"{e['term']}{also}")
        echo(textwrap.fill(e["meaning"], width=78, initial_indent="  ", subsequent_indent="  "))
        echo(f"  e.g., from {e['example_from']}:")
        echo(f"    {e['example']}")


_OUTPUTS: dict[tuple[str, ...], str] = {}


def _example(term: Any) -> str:
    """The first line of the term's source output that its pattern matches."""
    import re

    text = _OUTPUTS.get(term.source)
    if text is None:
        text = _OUTPUTS[term.source] = _run_source(term.source)
    for line in text.splitlines():
        if re.search(term.pick, line):
            return line.rstrip()
    raise RuntimeError(f"the glossary example of {term.term!r} is missing from {term.example_from}")


def _run_source(source: tuple[str, ...]) -> str:
    """The output of ``arrange SOURCE`` run in this process, or with no source the Markdown
    report of the starter project (built in memory, nothing written)."""
    import contextlib
    import io

    if not source:
        import tomllib

        from arrange.build import render_project
        from arrange.project import project_from_data

        proj = project_from_data(tomllib.loads(starter_text("cue.toml")), "starter")
        _voiced, _layers, files = render_project(proj, ("report",))
        return files[f"{proj.slug}.report.md"].decode("utf-8")
    buf = io.StringIO()
    with contextlib.redirect_stdout(buf):
        try:
            main(list(source))
        except SystemExit as done:                 # main always exits
            if done.code not in (0, None):
                raise
    return buf.getvalue()


def _build_errors(text: str) -> int | None:
    """Errors in the build of a project text, run in memory (None: it does not build)."""
    import tomllib

    from arrange.build import run_layers, run_pipeline
    from arrange.project import project_from_data

    try:
        project = project_from_data(tomllib.loads(text), "design --write-project")
        voiced = run_pipeline(project)
        layers = run_layers(project, voiced)
    except ArrangeError:
        return None
    sev = [f.severity for f in voiced.findings] + [f.severity for v in layers for f in v.findings]
    return sev.count("error")


class _Progress:
    """A progress bar on stderr, shown once a search has run for a second."""

    def __init__(self) -> None:
        import time

        self.clock = time.monotonic
        self.t0 = self.clock()
        self.shown = False
        self.percent = -1

    def __call__(self, done: int, total: int) -> None:
        if not self.shown and self.clock() - self.t0 < 1.0:
            return
        percent = 100 * done // max(total, 1)
        if self.shown and percent == self.percent:
            return                           # redraw once per percent
        self.shown, self.percent = True, percent
        width = 30
        filled = width * done // max(total, 1)
        echo(f"\r[{'#' * filled}{'.' * (width - filled)}] {percent:3d}% "
                   f"{done:,} of {total:,} motifs", err=True, nl=False)

    def close(self) -> None:
        if self.shown:
            echo("", err=True)


@command("Search every motif for RI chains with the properties asked.")
@option("-n", "--length", required=True, type=WHOLE, metavar="N", help="Notes in the motif (2..8).")
@option("-k", "--statements", default=4, type=WHOLE, metavar="K", help=_with_default("Statements (1..64)."))
@option("--overlap", default=2, type=WHOLE, metavar="N", help=_with_default("Notes shared by each link."))
@option("--start", default=None, metavar="NOTE", help="First note (default C4; a transition's first tonic).")
@option("--max-step", default=None, type=WHOLE, metavar="S",
        help="Largest melodic step in semitones (default 12).")
@option("--steps", default=None, metavar="LIST", help="Allowed step sizes, e.g. 1,2,5 (both ways) or +3,-4.")
@option("--no-repeats", action="store_true", help="No pitch class twice inside the motif.")
@option("--transposition", default=None, type=WHOLE, metavar="T",
        help="Statement 3 lies T semitones from statement 1.")
@option("--transposition-class", action="store_true", help="Accept --transposition in any octave.")
@option("--compass", default=None, type=WHOLE, metavar="C", help="Compass after two statements, semitones.")
@option("--span", default=None, type=WHOLE, metavar="S", help="The whole chain within S semitones.")
@option("--aggregate", action="store_true", help="The chain completes all 12 pitch classes.")
@option("--aggregate-within", default=None, type=WHOLE, metavar="M", help="... within its first M notes.")
@option("--key", dest="key_text", default=None, metavar="KEY",
        help='Key for --diatonic / --chromatic-notes, e.g. "F major".')
@option("--diatonic", action="store_true", help="Every chain note in the key.")
@option("--chromatic-notes", default=None, type=WHOLE, metavar="M", help="At most M chain notes outside the key.")
@option("--from-key", default=None, metavar="KEY", help='A transition: the key the chain starts in.')
@option("--to-key", default=None, metavar="KEY", help="... and the key its last statement reaches.")
@option("--top", default=10, type=WHOLE, metavar="M", help=_with_default("How many results to show (1..1000)."))
@option("--count", dest="count_only", action="store_true", help="Only count the motifs that meet the constraints.")
@option("--json", dest="as_json", action="store_true", help="Print one JSON object.")
@option("--force", action="store_true", help="Search a space of more than 10^9 motifs.")
@option("--write-project", default=None, type=_file, metavar="FILE",
        help="Write a starter project around the best result (never over a file).")
@guarded
def design(length: int, statements: int, overlap: int, start: str | None, max_step: int | None,
           steps: str | None, no_repeats: bool, transposition: int | None, transposition_class: bool,
           compass: int | None, span: int | None, aggregate: bool, aggregate_within: int | None,
           key_text: str | None, diatonic: bool, chromatic_notes: int | None, from_key: str | None,
           to_key: str | None, top: int, count_only: bool, as_json: bool, force: bool,
           write_project: Path | None) -> None:
    """Search every motif of --length notes for RI chains with the properties asked."""
    from arrange.chain.spec import make_spec, parse_steps
    from arrange.errors import DesignError, OutputError
    from arrange.theory.keys import parse_key
    from arrange.theory.pitch import parse_pitch

    if not 1 <= top <= 1000:
        raise DesignError(f"--top {top} is out of range", where="--top", accepted="1..1000")
    if write_project is not None and count_only:
        raise DesignError("--write-project with --count", where="--write-project/--count",
                          accepted="one of the two (--count ranks nothing)")
    if write_project is not None and write_project.exists():
        raise OutputError(f"{str(write_project)!r} already exists", where="--write-project",
                          accepted="a new file name")
    spec = make_spec(
        length, statements=statements, overlap=overlap,
        start=parse_pitch(start, where="--start") if start is not None else None,
        max_step=max_step, steps=parse_steps(steps) if steps is not None else None,
        no_repeats=no_repeats, transposition=transposition, transposition_class=transposition_class,
        compass=compass, span=span, aggregate=aggregate, aggregate_within=aggregate_within,
        key=parse_key(key_text, where="--key") if key_text is not None else None,
        diatonic=diatonic, chromatic_notes=chromatic_notes,
        from_key=parse_key(from_key, where="--from-key") if from_key is not None else None,
        to_key=parse_key(to_key, where="--to-key") if to_key is not None else None)
    from arrange.chain.design import check_space, search

    total = check_space(spec, force)
    echo(f"searching {total:,} motifs ({len(spec.steps)} allowed steps ^ {length - 1}) ...", err=True)
    bar = _Progress()
    try:
        found = search(spec, top, count_only=count_only, progress=bar)
    finally:
        bar.close()
    for note in found.relaxed:
        echo(f"arrange: relaxed {note}", err=True)
    if write_project is not None:
        from arrange.design_project import project_text
        from arrange.writers.files import write_batch

        if not found.results:
            raise DesignError("no motif meets the constraints, so there is no project to write",
                              where="--write-project", accepted="looser constraints")
        best = found.results[0]
        write_batch(write_project.parent if str(write_project.parent) else Path("."),
                    {write_project.name: project_text(spec, best.chain, best.why,
                                                      _build_errors).encode("utf-8")})
        echo(f"wrote {write_project}", err=True)
    if as_json:
        import json

        echo(json.dumps(found.to_json()))
        return
    if count_only:
        echo(str(found.count))
        return
    echo(f"{found.count:,} of {found.searched:,} motifs meet the constraints")
    for i, f in enumerate(found.results, start=1):
        c = f.chain
        echo(f"{i:>3}. {f.score:.4f}  {' '.join(c.names[:length]):<32} T {c.transposition:+d}  "
                   f"compass {c.compass_after_two:+d}  span {c.span[1] - c.span[0]}")
        echo(f"     line  {' '.join(c.names)}")
        echo(f"     why   {f.why}")


def entry() -> None:
    """The program's entry point (``arrange`` and ``python -m arrange``): the command, then
    an exit without the interpreter's final clean-up.  Every file is written and closed by
    then (``files.write_batch``), so tearing down the modules and collecting every object
    one by one (about a tenth of a short build) changes nothing but the time; the output
    streams are flushed first.

    numpy's bundled OpenBLAS starts a worker thread per processor when numpy is imported,
    and those threads spin for a while: on a 2-core machine about a fifth of a short
    build's processor time.  The stages' numpy work is element-wise on small integer
    arrays (no BLAS call), so the program asks for one BLAS thread unless the user's
    environment says otherwise; results are the same.

    The cyclic garbage collector looks at the young objects after every 50,000
    allocations instead of every 700: a build makes hundreds of thousands of small
    objects that live to its end, and collecting among them again and again was about
    6% of its processor time; what a build leaves as cyclic garbage is little (its peak
    memory is unchanged), and it is still collected, only in larger batches."""
    import gc
    import os

    os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
    gc.set_threshold(50_000, 10, 10)
    code: Any = 0
    try:
        main()
    except SystemExit as stop:
        code = stop.code
    if code is not None and not isinstance(code, int):
        print(code, file=sys.stderr)
        code = 1
    for stream in (sys.stdout, sys.stderr):
        try:
            stream.flush()
        except (OSError, ValueError):
            pass
    os._exit(code or 0)
