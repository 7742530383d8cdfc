"""Run one command of gnssrel in a forked child and classify what it did.

One ``multiprocessing`` Process (``fork`` context) per case: the child redirects
its stdout and stderr at the file-descriptor level into files, calls
``gnssrel.cli.main(argv)`` exactly as the command line would and exits with its
status; it is killed after the time limit.  The parent imported gnssrel and its
libraries once, so a case costs its work, not Python's start-up.

Classes (what the promise in the README allows):

``ok``       exit 0
``refused``  exit 2 with exactly one error line on stderr, naming the mutated file
``crash``    exit 1, a traceback, another exit status or a signal, or exit 2 whose
             message does not name the mutated file or takes more than one line
``hang``     still running after the time limit (killed)
``partial``  an output file left behind on a non-zero exit, or a ``.part`` file anywhere

A child also records the traceback of any exception leaving the job (the CLI
prints only one line), so a crash can be traced to its module.
"""

from __future__ import annotations

import math
import multiprocessing
import os
import re
import resource
import sys
import time
import traceback
from dataclasses import dataclass, field
from pathlib import Path

TIME_LIMIT_S = 30.0
MEMORY_HEADROOM = 4 << 30            # address space a case may add to what the parent holds

_FORK = multiprocessing.get_context("fork")


def preload() -> list[str]:
    """Import gnssrel's command-line modules and the libraries they use, once, in the parent.

    Returns the modules that failed to import (another contributor mid-edit): each case
    then imports them itself and fails the way a user would see it.
    """
    import importlib
    import pkgutil

    import gnssrel
    import gnssrel.cli

    failed = []
    for lib in ("numpy", "pandas", "xarray", "scipy.interpolate", "pyarrow.parquet", "hatanaka", "unlzw3"):
        try:
            importlib.import_module(lib)
        except Exception as exc:  # noqa: BLE001 -- any failure to import is the finding
            failed.append(f"{lib}: {type(exc).__name__}: {exc}")
    for info in pkgutil.walk_packages(gnssrel.__path__, "gnssrel."):
        if info.name.startswith(("gnssrel.__main__", "gnssrel.report", "gnssrel.simulate", "gnssrel.jobs.report",
                                 "gnssrel.jobs.demo", "gnssrel.jobs.simulate")):
            continue
        try:
            importlib.import_module(info.name)
        except Exception as exc:  # noqa: BLE001 -- any failure to import is the finding
            failed.append(f"{info.name}: {type(exc).__name__}: {exc}")
    return failed


def _vm_size() -> int:
    try:
        for line in Path("/proc/self/status").read_text().splitlines():
            if line.startswith("VmSize:"):
                return int(line.split()[1]) * 1024
    except OSError:
        pass
    return 0


def _child(argv, case_dir: str, memory_limit: int) -> None:
    """Body of the forked child: run the command, exit with its status."""
    os.chdir(case_dir)
    for fd, name in ((1, "stdout.txt"), (2, "stderr.txt")):
        target = os.open(os.path.join(case_dir, name), os.O_WRONLY | os.O_CREAT | os.O_TRUNC, 0o644)
        os.dup2(target, fd)
        os.close(target)
    # A parent under pytest has replaced sys.stdout/err and given the root logger handlers:
    # give the child plain streams on fds 1 and 2 and an unconfigured logging, as a shell would.
    sys.stdout = open(1, "w", closefd=False, encoding="utf-8", errors="backslashreplace")  # noqa: SIM115
    sys.stderr = open(2, "w", closefd=False, encoding="utf-8", errors="backslashreplace")  # noqa: SIM115
    import logging

    root = logging.getLogger()
    for handler in list(root.handlers):
        root.removeHandler(handler)
    root.setLevel(logging.WARNING)
    if memory_limit:
        resource.setrlimit(resource.RLIMIT_AS, (memory_limit, memory_limit))
    code = 1
    try:
        from gnssrel import cli

        side = os.path.join(case_dir, "exception.txt")
        for _, module in cli._available_jobs():
            _record_exceptions(module, side)
        code = cli.main(list(argv))
    except SystemExit as exc:       # argparse refusing an option
        code = exc.code if isinstance(exc.code, int) else 1
    except BaseException:  # noqa: BLE001 -- the campaign records every escape as a crash
        traceback.print_exc()
        code = 1
    finally:
        try:
            sys.stdout.flush()
            sys.stderr.flush()
        finally:
            os._exit(code if isinstance(code, int) else 1)


def _record_exceptions(module, side_path: str) -> None:
    """Wrap the job's ``run`` so the traceback of an exception leaving it lands in a file."""
    run = module.run
    if getattr(run, "_hostile_wrapped", False):
        return

    def wrapped(args, _run=run):
        try:
            return _run(args)
        except BaseException:
            with open(side_path, "w") as f:
                f.write(traceback.format_exc())
            raise
    wrapped._hostile_wrapped = True
    module.run = wrapped


@dataclass
class Outcome:
    exit: int | None              # None: killed after the time limit
    elapsed_s: float
    stdout: str
    stderr: str
    exception: str                # traceback of an exception leaving the job ("" if none)
    left_files: list = field(default_factory=list)   # output files present after the run
    part_files: list = field(default_factory=list)   # *.part files anywhere


def run_case(argv, case_dir: Path, out_dir: Path, watch_dirs=(), time_limit=TIME_LIMIT_S) -> Outcome:
    """Run ``gnssrel.cli.main(argv)`` in a forked child inside ``case_dir``."""
    sys.stdout.flush()
    sys.stderr.flush()
    limit = _vm_size() + MEMORY_HEADROOM if _vm_size() else 0
    t0 = time.monotonic()
    p = _FORK.Process(target=_child, args=(list(argv), str(case_dir), limit), daemon=True)
    p.start()
    p.join(time_limit)
    if p.is_alive():
        p.kill()
        p.join()
        code = None
    else:
        code = p.exitcode
    elapsed = time.monotonic() - t0
    p.close()

    def read(name):
        path = case_dir / name
        return path.read_text(errors="replace") if path.exists() else ""
    left = sorted(str(q.relative_to(out_dir)) for q in out_dir.rglob("*") if q.is_file()) if out_dir.exists() else []
    parts = sorted(str(q) for d in (case_dir, *watch_dirs) for q in Path(d).rglob("*.part"))
    return Outcome(code, elapsed, read("stdout.txt"), read("stderr.txt"), read("exception.txt"), left, parts)


# -- classification --------------------------------------------------------------------------------
@dataclass
class Verdict:
    cls: str                      # ok, refused, crash, hang, partial
    reason: str                   # why, for the classes other than ok/refused
    signature: str                # groups cases with the same failure
    message: str = ""             # the error line, if any
    flags: list = field(default_factory=list)     # stray_stderr, partial, silently_wrong, ...


def _where(tb: str) -> str:
    """Innermost frame of the traceback inside the gnssrel package: 'io/sp3.py:_read_one'."""
    frames = re.findall(r'File "([^"]+)", line \d+, in (\S+)', tb)
    inside = [(f, fn) for f, fn in frames if "/gnssrel/" in f and "/tests/" not in f]
    if not inside:
        return frames[-1][0].rsplit("/", 1)[-1] + ":" + frames[-1][1] if frames else "?"
    f, fn = inside[-1]
    return f.split("/gnssrel/", 1)[1] + ":" + fn


def normalise(text: str, paths=()) -> str:
    for p in sorted(paths, key=len, reverse=True):
        text = text.replace(str(p), "<file>")
    text = re.sub(r"/tmp/\S+", "<path>", text)
    text = re.sub(r"'[^']{25,}'", "'...'", text)
    text = re.sub(r"\d+(\.\d+)?([eE][-+]?\d+)?", "N", text)
    return text[:110]


def classify(outcome: Outcome, command: str, mutated: Path, inputs=(), case_dir: Path | None = None) -> Verdict:
    lines = [line for line in outcome.stderr.splitlines() if line.strip()]
    prefix = f"gnssrel {command}: "
    error_at = next((k for k, line in enumerate(lines) if line.startswith(prefix + "error:")), None)
    stray = [line for line in lines if not line.startswith("gnssrel")]
    flags = []
    if stray:
        flags.append("stray_stderr")
    if outcome.part_files:
        flags.append("part_file")
    left = outcome.exit not in (0, None) and outcome.left_files
    if left:
        flags.append("output_left")
    paths = [str(mutated), str(case_dir) if case_dir else "", *map(str, inputs)]
    where = _where(outcome.exception) if outcome.exception else ""
    exc_type = ""
    if outcome.exception:
        exc_type = outcome.exception.strip().splitlines()[-1].split(":")[0]
    if outcome.exit is None:
        return Verdict("hang", f"killed after {TIME_LIMIT_S:g} s", "hang", flags=flags)
    if "Traceback (most recent call last)" in outcome.stderr:
        tb_where = _where(outcome.stderr)
        last = outcome.stderr.strip().splitlines()[-1]
        return Verdict("crash", "traceback on stderr", f"traceback {last.split(':')[0]} at {tb_where}",
                       last, flags)
    if outcome.exit == 1:
        line = next((x for x in lines if x.startswith(prefix + "internal error:")), lines[-1] if lines else "")
        said = line.split("internal error:")[-1].replace("(run again with -v for the traceback)", "").strip()
        said = said.removeprefix(f"{exc_type}:").strip()
        return Verdict("crash", "exit 1 (internal error)",
                       f"{exc_type or 'exit 1'} at {where or '?'}: {normalise(said, paths)}", line, flags)
    if outcome.exit not in (0, 2):
        return Verdict("crash", f"exit status {outcome.exit}", f"exit {outcome.exit}",
                       lines[-1] if lines else "", flags)
    if outcome.exit == 2:
        if error_at is None:
            return Verdict("crash", "exit 2 without an error line", "exit 2 without an error line",
                           " | ".join(lines[-2:]), flags)
        message = lines[error_at]
        rest = lines[error_at + 1:]
        if rest:
            return Verdict("crash", "exit 2 message of more than one line",
                           f"multi-line message at {where or '?'}: {normalise(message, paths)}",
                           " | ".join([message, *rest])[:300], flags)
        if mutated.name not in message:
            others = [Path(p).name for p in inputs if Path(p).name in message]
            why = f"names {', '.join(others)} instead" if others else "names no file"
            return Verdict("crash", f"exit 2 message does not name the mutated file ({why})",
                           f"unnamed file at {where or '?'}: {normalise(message, paths)}", message, flags)
        cls = "partial" if left or outcome.part_files else "refused"
        return Verdict(cls, "output left behind" if cls == "partial" else "",
                       f"partial: {', '.join(outcome.left_files + outcome.part_files)[:80]}" if cls == "partial"
                       else normalise(message, paths), message, flags)
    if outcome.part_files:
        return Verdict("partial", ".part file left", "partial: .part file after exit 0", flags=flags)
    return Verdict("ok", "", "ok", flags=flags)


# -- "silently wrong" candidates -------------------------------------------------------------------
def numbers(obj, prefix="") -> dict:
    """Flatten the numeric leaves of a summary (the accounting left out): path -> value."""
    out = {}
    if isinstance(obj, dict):
        for k, v in obj.items():
            if k in ("accounting", "warnings", "paths", "path", "files"):
                continue
            out.update(numbers(v, f"{prefix}/{k}"))
    elif isinstance(obj, list):
        for k, v in enumerate(obj):
            out.update(numbers(v, f"{prefix}[{k}]"))
    elif isinstance(obj, bool) or obj is None:
        out[prefix] = obj
    elif isinstance(obj, (int, float)):
        out[prefix] = float(obj)
    elif isinstance(obj, str):
        out[prefix] = re.sub(r"\S*/", "", obj)       # file names without their folders
    return out


def changed_fields(summary: dict, baseline: dict) -> list[str]:
    """Leaves of the summary that differ from the clean run's (relative 1e-9)."""
    a, b = numbers(summary), numbers(baseline)
    diff = []
    for key in sorted(set(a) | set(b)):
        x, y = a.get(key, "<missing>"), b.get(key, "<missing>")
        if isinstance(x, float) and isinstance(y, float):
            if math.isnan(x) and math.isnan(y):
                continue
            if math.isclose(x, y, rel_tol=1e-9, abs_tol=1e-15):
                continue
        elif x == y:
            continue
        diff.append(key)
    return diff


def warned(outcome: Outcome, summary: dict | None) -> bool:
    """Did the run warn: a warning line on stderr, or a warning in the summary's accounting?"""
    if any(line.startswith("gnssrel:") for line in outcome.stderr.splitlines()):
        return True
    acc = (summary or {}).get("accounting") or {}
    return bool(acc.get("warnings") or acc.get("warnings_dropped"))


def unbalanced(summary: dict | None) -> list[str]:
    """Cells of the summary's accounting where read != used + dropped (empty: balanced or absent)."""
    acc = (summary or {}).get("accounting")
    if not isinstance(acc, dict):
        return []
    try:
        from gnssrel.accounting import Ledger

        return Ledger.from_dict(acc).unbalanced()
    except Exception as exc:  # noqa: BLE001 -- an unreadable ledger is the finding
        return [f"accounting unreadable: {type(exc).__name__}: {exc}"]
