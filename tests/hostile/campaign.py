"""The campaign: cases from (seed, index), the clean baselines, the run, the report, a replay.

A case is fully determined by ``(seed, index)``: the scenario (command and inputs)
is ``SCENARIOS[index % len(SCENARIOS)]``, and the input to damage, the mutation and
its every detail are drawn from ``random.Random(f"hostile:{seed}:{index}")``.
"""

from __future__ import annotations

import argparse
import json
import random
import shlex
import shutil
import sys
import tempfile
import time
from collections import Counter
from dataclasses import dataclass
from pathlib import Path

from . import mutations, runner, seeds
from . import report as reporting

# name -> (command, argument template); {kind} is a seed (or the mutated file), {out} the output folder.
SCENARIOS = {
    "orbits-nav3": ("orbits", ["{nav3}"]),
    "orbits-nav3-sp3": ("orbits", ["{nav3}", "--precise", "{sp3}"]),
    "orbits-nav2": ("orbits", ["{nav2}"]),
    "relativity-nav3": ("relativity", ["{nav3}"]),
    "relativity-sp3": ("relativity", ["{nav3}", "--precise", "{sp3}"]),
    "relativity-nav2": ("relativity", ["{nav2}"]),
    "clocks-sp3": ("clocks", ["{nav3}", "--precise", "{sp3}"]),
    "clocks-clk-csv": ("clocks", ["{nav3}", "--precise", "{clk}", "--receiver-clocks", "{csv}"]),
    "clocks-nav2-clk": ("clocks", ["{nav2}", "--precise", "{clk}"]),
    "audit-fixes-clocks": ("audit", ["{obs3}", "{nav3}", "--receiver-fixes", "{nmea}",
                                     "--receiver-clocks", "{csv}", "--positions", "{out}/positions.csv"]),
    "audit-precise": ("audit", ["{obs3}", "{nav3}", "--precise", "{sp3}", "{clk}"]),
    "audit-rinex2": ("audit", ["{obs2}", "{nav2}", "--receiver-fixes", "{nmea}"]),
    "audit-obs3-nav2": ("audit", ["{obs3}", "{nav2}", "--systems", "G"]),
    "audit-obs2-nav3-sp3": ("audit", ["{obs2}", "{nav3}", "--precise", "{sp3}"]),
}
OUTPUTS = ["--summary", "{out}/summary.json", "--output", "{out}/table.csv"]
CLASSES = reporting.CLASSES


def roles(scenario: str) -> list[str]:
    return [a[1:-1] for a in SCENARIOS[scenario][1] if a.startswith("{") and a != "{out}/positions.csv"]


_SCENARIOS_WITH = Counter(k for name in SCENARIOS for k in roles(name))


@dataclass
class Context:
    folder: Path                  # where the seeds are
    seeds: dict                   # kind -> bytes
    names: dict                   # kind -> file name
    paths: dict                   # kind -> Path of the clean seed
    hatanaka: dict                # kind -> Hatanaka-compressed bytes (obs3, obs2)


def make_context(folder: Path | None) -> Context:
    """The seeds (bytes), written into ``folder``/seeds unless ``folder`` is None."""
    data = {k: text.encode() for k, text in seeds.seed_texts().items()}
    paths = {}
    if folder is not None:
        (folder / "seeds").mkdir(parents=True, exist_ok=True)
        for kind, raw in data.items():
            paths[kind] = folder / "seeds" / seeds.SEED_NAMES[kind]
            paths[kind].write_bytes(raw)
    return Context(folder, data, dict(seeds.SEED_NAMES), paths,
                   {k: _compress(data[k]) for k in ("obs3", "obs2")})


def subset(ctx: Context, seed: int, per_mutation: int = 2, limit: int = 2000) -> list[int]:
    """Indices of the first cases of ``seed`` that give every mutation ``per_mutation`` cases,
    each on another kind of input where the mutation applies to several."""
    taken, seen, picked = Counter(), set(), []
    for index in range(limit):
        case = make_case(ctx, seed, index)
        if taken[case.mutation] < per_mutation and (case.mutation, case.role) not in seen:
            taken[case.mutation] += 1
            seen.add((case.mutation, case.role))
            picked.append(index)
        if len(taken) == len(mutations.MUTATIONS) and min(taken.values()) >= per_mutation:
            break
    return picked


def _compress(text: bytes) -> bytes:
    """Hatanaka-compress a seed; the program/date line is made constant so the bytes repeat."""
    import hatanaka

    packed = hatanaka.compress(text, compression="none")
    lines = packed.splitlines(keepends=True)
    lines[1] = b"hostile campaign".ljust(40) + b"01-Jan-25 00:00     CRINEX PROG / DATE\n"
    return b"".join(lines)


@dataclass
class Case:
    seed: int
    index: int
    scenario: str
    command: str
    role: str                     # the kind of input damaged
    mutation: str
    mutated: mutations.Mutated

    @property
    def id(self) -> str:
        return f"{self.seed}:{self.index}"


def make_case(ctx: Context, seed: int, index: int) -> Case:
    names = list(SCENARIOS)
    scenario = names[index % len(names)]
    rng = random.Random(f"hostile:{seed}:{index}")
    kinds = roles(scenario)
    weights = [1.0 / _SCENARIOS_WITH[k] for k in kinds]     # every kind damaged about as often
    for _ in range(50):
        role = rng.choices(kinds, weights)[0]
        name = rng.choice(mutations.applicable(role))
        out = mutations.mutate(rng, name, ctx.seeds[role], role, ctx)
        if out is not None:
            return Case(seed, index, scenario, SCENARIOS[scenario][0], role, name, out)
    raise RuntimeError(f"no mutation applies to case {seed}:{index}")


def argv_for(ctx: Context, scenario: str, case_dir: Path, damaged: dict | None = None) -> list[str]:
    """The command line of a scenario, with ``damaged`` (kind -> path) replacing seeds."""
    damaged = damaged or {}
    out = case_dir / "out"
    command, template = SCENARIOS[scenario]
    args = []
    for a in template + OUTPUTS:
        if a.startswith("{out}"):
            args.append(a.replace("{out}", str(out)))
        elif a.startswith("{"):
            args.append(str(damaged.get(a[1:-1], ctx.paths[a[1:-1]])))
        else:
            args.append(a)
    return [command, *args]


def write_case(ctx: Context, case: Case, case_dir: Path) -> tuple[Path, list[str]]:
    """Write the damaged input of a case; return its path and the argv."""
    (case_dir / "in").mkdir(parents=True, exist_ok=True)
    (case_dir / "out").mkdir(exist_ok=True)
    name = (case.mutated.rename or ctx.names[case.role]) + case.mutated.suffix
    path = case_dir / "in" / name
    path.write_bytes(case.mutated.data)
    return path, argv_for(ctx, case.scenario, case_dir, {case.role: path})


def run_baselines(ctx: Context) -> dict:
    """The clean run of every scenario: its summary (for the 'silently wrong' check) and class."""
    out = {}
    for scenario in SCENARIOS:
        case_dir = ctx.folder / "baseline" / scenario
        (case_dir / "out").mkdir(parents=True, exist_ok=True)
        argv = argv_for(ctx, scenario, case_dir)
        res = runner.run_case(argv, case_dir, case_dir / "out", watch_dirs=[ctx.folder / "seeds"])
        summary_path = case_dir / "out" / "summary.json"
        summary = json.loads(summary_path.read_text()) if summary_path.exists() else None
        out[scenario] = {"exit": res.exit, "summary": summary, "stderr": res.stderr.strip()[-300:],
                         "elapsed_s": round(res.elapsed_s, 3)}
    return out


def run_one(ctx: Context, case: Case, baselines: dict, keep: bool = False) -> dict:
    case_dir = ctx.folder / "cases" / f"{case.seed}_{case.index}"
    if case_dir.exists():
        shutil.rmtree(case_dir)
    path, argv = write_case(ctx, case, case_dir)
    res = runner.run_case(argv, case_dir, case_dir / "out", watch_dirs=[ctx.folder / "seeds"])
    inputs = [ctx.paths[k] for k in roles(case.scenario) if k != case.role]
    verdict = runner.classify(res, case.command, path, inputs, case_dir)
    record = {"id": case.id, "seed": case.seed, "index": case.index, "scenario": case.scenario,
              "command": case.command, "role": case.role, "mutation": case.mutation,
              "what": case.mutated.what, "refusable": case.mutated.refusable,
              "exit": res.exit, "class": verdict.cls, "reason": verdict.reason,
              "signature": verdict.signature, "message": verdict.message[:400],
              "elapsed_s": round(res.elapsed_s, 3), "flags": list(verdict.flags),
              "stderr_tail": res.stderr.strip()[-600:], "left_files": res.left_files,
              "part_files": res.part_files, "exception": res.exception.strip()[-1500:],
              "argv": [a.replace(str(case_dir), "<case>").replace(str(ctx.folder / "seeds"), "<seeds>")
                       for a in argv]}
    base = baselines.get(case.scenario, {})
    if res.exit == 0 and base.get("exit") == 0:
        summary_path = case_dir / "out" / "summary.json"
        summary = json.loads(summary_path.read_text()) if summary_path.exists() else None
        if summary is None:
            record["flags"].append("no_summary_on_exit_0")
        else:
            diff = runner.changed_fields(summary, base["summary"])
            said = runner.warned(res, summary)
            record["changed"] = diff[:8]
            record["warned"] = said
            if not isinstance(summary.get("accounting"), dict):
                record["flags"].append("no_accounting_in_summary")
            off = runner.unbalanced(summary)
            if off:
                record["flags"].append("accounting_unbalanced")
                record["unbalanced"] = off[:3]
            if case.mutated.refusable and diff and not said:
                record["flags"].append("silently_wrong")
            elif case.mutated.refusable and not diff and not said:
                record["flags"].append("silent_unchanged")
    if not keep:
        shutil.rmtree(case_dir, ignore_errors=True)
    return record


def campaign(n_cases: int, seed: int, report: Path | None, start: int = 0, keep: bool = False,
             quiet: bool = False) -> tuple[list, dict]:
    started = time.strftime("%Y-%m-%d %H:%M:%S", time.gmtime())
    t0 = time.monotonic()
    failures = runner.preload()
    folder = Path(tempfile.mkdtemp(prefix="gnssrel-hostile-"))
    try:
        ctx = make_context(folder)
        baselines = run_baselines(ctx)
        bad_base = {k: v for k, v in baselines.items() if v["exit"] != 0}
        records = []
        for index in range(start, start + n_cases):
            records.append(run_one(ctx, make_case(ctx, seed, index), baselines, keep))
            if not quiet and (len(records) % 100 == 0):
                c = Counter(r["class"] for r in records)
                print(f"  {len(records)}/{n_cases} cases, {time.monotonic() - t0:.0f} s: "
                      + ", ".join(f"{k} {c[k]}" for k in CLASSES), file=sys.stderr, flush=True)
    finally:
        if not keep:
            shutil.rmtree(folder, ignore_errors=True)
    meta = {"seed": seed, "start": start, "cases": n_cases, "started": started, "code": code_state(),
            "finished": time.strftime("%Y-%m-%d %H:%M:%S", time.gmtime()),
            "wall_s": time.monotonic() - t0, "import_failures": failures,
            "baselines_not_ok": {k: v["stderr"] for k, v in bad_base.items()},
            "baseline_elapsed_s": {k: v["elapsed_s"] for k, v in baselines.items()},
            "time_limit_s": runner.TIME_LIMIT_S}
    if report:
        report.write_text(json.dumps({"meta": meta, "counts": reporting.counts(records), "cases": records},
                                     indent=1))
    return records, meta


def code_state() -> str:
    """Which gnssrel was run: a hash of its source files (they change while others work)."""
    import hashlib

    import gnssrel

    root = Path(gnssrel.__file__).parent
    digest = hashlib.sha1()
    files = sorted(root.rglob("*.py"))
    for f in files:
        digest.update(str(f.relative_to(root)).encode() + f.read_bytes())
    return f"gnssrel sources sha1 {digest.hexdigest()[:12]} ({len(files)} files)"


def replay(case_id: str, keep_dir: Path | None) -> int:
    seed, index = (int(v) for v in case_id.split(":"))
    failures = runner.preload()
    folder = keep_dir or Path(tempfile.mkdtemp(prefix="gnssrel-hostile-replay-"))
    folder.mkdir(parents=True, exist_ok=True)
    ctx = make_context(folder)
    case = make_case(ctx, seed, index)
    case_dir = folder / "cases" / f"{seed}_{index}"
    shutil.rmtree(case_dir, ignore_errors=True)
    path, argv = write_case(ctx, case, case_dir)
    print(f"case {case.id}: {case.scenario}, damaged {case.role} ({case.mutation}): {case.mutated.what}")
    print(f"damaged file: {path}")
    print("reproduce:  gnssrel " + " ".join(shlex.quote(a) for a in argv))
    if failures:
        print(f"modules that failed to import: {failures}")
    res = runner.run_case(argv, case_dir, case_dir / "out", watch_dirs=[ctx.folder / "seeds"])
    inputs = [ctx.paths[k] for k in roles(case.scenario) if k != case.role]
    verdict = runner.classify(res, case.command, path, inputs, case_dir)
    print(f"exit {res.exit} after {res.elapsed_s:.2f} s: {verdict.cls} {verdict.reason}".rstrip())
    print(f"signature: {verdict.signature}")
    if res.stderr.strip():
        print("stderr:\n  " + "\n  ".join(res.stderr.strip().splitlines()[-15:]))
    if res.exception:
        print("exception leaving the job:\n  " + "\n  ".join(res.exception.strip().splitlines()[-12:]))
    print(f"files kept in {folder}")
    return 0


def main(argv=None) -> int:
    p = argparse.ArgumentParser(prog="python -m tests.hostile",
                                description="Hostile-input campaign of gnssrel: damaged copies of "
                                            "the demo data through orbits, relativity, clocks and audit.")
    p.add_argument("--cases", type=int, default=2000, help="number of cases (default 2000)")
    p.add_argument("--seed", type=int, default=1, help="campaign seed (default 1)")
    p.add_argument("--start", type=int, default=0, help="first case index (default 0)")
    p.add_argument("--report", type=Path, help="write every case as JSON to this file")
    p.add_argument("--markdown", type=Path, help="write the failures grouped by command and signature as Markdown")
    p.add_argument("--compare", type=Path, metavar="OLD.json",
                   help="also print how the cases of an earlier --report of the same seed changed class")
    p.add_argument("--keep", action="store_true", help="keep the work folder (seeds, cases)")
    p.add_argument("--replay", metavar="SEED:INDEX", help="rebuild and run one case, print how to reproduce it")
    p.add_argument("--replay-dir", type=Path, help="folder for the replayed case's files")
    p.add_argument("--groups", type=int, default=60, help="failure groups to print (default 60)")
    args = p.parse_args(argv)
    if args.replay:
        return replay(args.replay, args.replay_dir)
    records, meta = campaign(args.cases, args.seed, args.report, args.start, args.keep)
    reporting.print_report(records, meta, max_groups=args.groups)
    if args.compare:
        reporting.compare(json.loads(args.compare.read_text())["cases"], records)
    if args.markdown:
        args.markdown.write_text(reporting.markdown(records, meta))
    bad = sum(r["class"] in reporting.FAILING for r in records)
    return 1 if bad else 0
