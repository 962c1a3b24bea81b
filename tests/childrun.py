"""Run the CLI in a child process and measure it there.

The child sets an address-space ceiling (so a runaway read fails fast instead of
eating the shared machine), runs ``arrange`` and, at exit, writes its own
``resource.getrusage(RUSAGE_SELF)`` (CPU seconds; peak resident memory from the
kernel's ``VmHWM`` where there is one, since on Linux ``ru_maxrss`` keeps the peak of the
parent it was forked from across ``exec``) and the
number of renames it made to a JSON file.  Test hooks live here, on the test
side only: environment variables make the child's ``os.replace``/``os.rename``
sleep, touch a marker, raise ``OSError`` (a full disk) or ``SIGKILL`` the child
at the N-th rename.  The product code has no test hook.
"""
from __future__ import annotations

import json
import os
import subprocess
import sys
import time
from dataclasses import dataclass, field
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent

_CHILD = r'''
import atexit, errno, json, os, resource, signal, sys, time
ceiling = int(os.environ.get("ARRANGE_T_AS", "0"))
if ceiling:
    resource.setrlimit(resource.RLIMIT_AS, (ceiling, ceiling))
report = os.environ["ARRANGE_T_REPORT"]
kill_at = int(os.environ.get("ARRANGE_T_KILL_AT", "0"))
fail_at = int(os.environ.get("ARRANGE_T_FAIL_AT", "0"))
slow = float(os.environ.get("ARRANGE_T_SLOW", "0"))
mark = os.environ.get("ARRANGE_T_MARK", "")
state = {"renames": 0}

def _dump():
    ru = resource.getrusage(resource.RUSAGE_SELF)
    peak = ru.ru_maxrss / 1024
    try:   # Linux carries the parent's peak across fork+exec in ru_maxrss; VmHWM is this program's
        with open("/proc/self/status") as fh:
            peak = next(int(ln.split()[1]) for ln in fh if ln.startswith("VmHWM:")) / 1024
    except (OSError, StopIteration, ValueError):
        pass
    with open(report, "w") as fh:
        json.dump({"maxrss_mb": peak, "cpu": ru.ru_utime + ru.ru_stime,
                   "renames": state["renames"]}, fh)

atexit.register(_dump)

def _wrap(real):
    def renaming(src, dst, *a, **k):
        state["renames"] += 1
        n = state["renames"]
        if mark and n == 1:
            open(mark, "w").close()
        if slow:
            time.sleep(slow)
        if n == kill_at:
            os.kill(os.getpid(), signal.SIGKILL)
        if n == fail_at:
            raise OSError(errno.ENOSPC, "No space left on device", str(dst))
        return real(src, dst, *a, **k)
    return renaming

os.replace = _wrap(os.replace)
os.rename = _wrap(os.rename)
sys.argv = ["arrange", *sys.argv[1:]]
from arrange.cli import main
main()
'''


@dataclass
class Child:
    code: int | None              # None: killed by the parent after the timeout (a hang)
    out: str
    err: str
    seconds: float                # wall clock, measured by the parent (reported, never asserted)
    stats: dict[str, float] = field(default_factory=dict)

    @property
    def mb(self) -> float:
        return float(self.stats.get("maxrss_mb", float("inf")))

    @property
    def cpu(self) -> float:
        return float(self.stats.get("cpu", float("inf")))

    @property
    def renames(self) -> int:
        return int(self.stats.get("renames", 0))

    def error_lines(self) -> list[str]:
        return [ln for ln in self.err.splitlines() if ln.startswith("arrange:")]


def child_env(tmp: Path, **hooks: object) -> dict[str, str]:
    env = dict(os.environ)
    env["PYTHONPATH"] = str(ROOT)
    env["ARRANGE_T_REPORT"] = str(tmp / f".rusage-{time.monotonic_ns()}.json")
    env.setdefault("ARRANGE_T_AS", str(3 * 1024 ** 3))
    for k, v in hooks.items():
        env[f"ARRANGE_T_{k.upper()}"] = str(v)
    return env


def start(args: list[str], tmp: Path, cwd: Path | None = None, **hooks: object
          ) -> tuple[subprocess.Popen[str], Path]:
    env = child_env(tmp, **hooks)
    proc = subprocess.Popen([sys.executable, "-c", _CHILD, *args], cwd=cwd or tmp, env=env,
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                            stdin=subprocess.DEVNULL)
    return proc, Path(env["ARRANGE_T_REPORT"])


def finish(proc: subprocess.Popen[str], report: Path, t0: float, timeout: float = 90) -> Child:
    try:
        out, err = proc.communicate(timeout=timeout)
        code: int | None = proc.returncode
    except subprocess.TimeoutExpired:
        proc.kill()
        out, err = proc.communicate()
        code = None
    seconds = time.monotonic() - t0
    stats = json.loads(report.read_text()) if report.exists() else {}
    report.unlink(missing_ok=True)
    return Child(code, out, err, seconds, stats)


def run(args: list[str], tmp: Path, cwd: Path | None = None, timeout: float = 90,
        **hooks: object) -> Child:
    t0 = time.monotonic()
    proc, report = start(args, tmp, cwd, **hooks)
    return finish(proc, report, t0, timeout)


def tree(folder: Path) -> dict[str, bytes]:
    """Every file under ``folder`` (hidden ones too), by relative path."""
    if not folder.exists():
        return {}
    return {str(p.relative_to(folder)): p.read_bytes() for p in sorted(folder.rglob("*")) if p.is_file()}
