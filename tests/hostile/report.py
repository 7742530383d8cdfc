"""What the campaign prints and writes: counts by class, the failures grouped by signature.

A *signature* groups cases that fail the same way: for a crash the exception type,
the innermost gnssrel frame (module:function) and the message with numbers and
paths blanked; for an exit-2 message that breaks the rules, what is wrong with it
and where it was raised.
"""

from __future__ import annotations

import sys
from collections import Counter, defaultdict

CLASSES = ("ok", "refused", "crash", "hang", "partial")
FAILING = ("crash", "hang", "partial")
REPLAY = "python -m tests.hostile --replay"


def counts(records) -> dict:
    return {"by_class": Counter(r["class"] for r in records),
            "by_command": {c: Counter(r["class"] for r in records if r["command"] == c)
                           for c in sorted({r["command"] for r in records})},
            "flags": Counter(f for r in records for f in r["flags"])}


def table(records, key) -> str:
    by = defaultdict(Counter)
    for r in records:
        by[r[key]][r["class"]] += 1
    head = f"{key:<22s}" + "".join(f"{c:>9s}" for c in CLASSES + ("total",)) + f"{'silent?':>9s}"
    rows = [head]
    for k in sorted(by):
        c = by[k]
        silent = sum(1 for r in records if r[key] == k and "silently_wrong" in r["flags"])
        rows.append(f"{k:<22s}" + "".join(f"{c[x]:>9d}" for x in CLASSES) + f"{sum(c.values()):>9d}{silent:>9d}")
    total = Counter(r["class"] for r in records)
    silent = sum(1 for r in records if "silently_wrong" in r["flags"])
    rows.append(f"{'all':<22s}" + "".join(f"{total[x]:>9d}" for x in CLASSES) + f"{len(records):>9d}{silent:>9d}")
    return "\n".join(rows)


def failing_groups(records) -> dict:
    """(class, command, signature) -> cases, the largest groups first."""
    groups = defaultdict(list)
    for r in records:
        if r["class"] in FAILING:
            groups[(r["class"], r["command"], r["signature"])].append(r)
    return dict(sorted(groups.items(), key=lambda kv: (-len(kv[1]), kv[0])))


def _head(records, meta) -> str:
    return (f"hostile-input campaign: {len(records)} cases, seed {meta['seed']} (indices {meta['start']}-"
            f"{meta['start'] + len(records) - 1}), {meta['wall_s']:.0f} s wall "
            f"({meta['started']} to {meta['finished']} UTC)")


def print_report(records, meta, out=sys.stdout, max_groups=60, examples=2) -> None:
    w = out.write
    w(_head(records, meta) + "\n")
    if meta.get("code"):
        w(meta["code"] + "\n")
    if meta.get("import_failures"):
        w(f"modules that failed to import at the start: {meta['import_failures']}\n")
    if meta.get("baselines_not_ok"):
        w(f"clean runs that did not exit 0: {meta['baselines_not_ok']}\n")
    w("\nby command\n" + table(records, "command") + "\n")
    w("\nby damaged input\n" + table(records, "role") + "\n")
    w("\nby mutation\n" + table(records, "mutation") + "\n")
    w("\ntime per case (s), by command: " + ", ".join(
        f"{c} mean {sum(t) / len(t):.2f} max {max(t):.1f}" for c, t in sorted(_times(records).items())) + "\n")
    flags = counts(records)["flags"]
    if flags:
        w("\nflags: " + ", ".join(f"{k} {v}" for k, v in sorted(flags.items())) + "\n")
    groups = failing_groups(records)
    w(f"\nfailing cases: {sum(len(v) for v in groups.values())} in {len(groups)} groups "
      f"(class, command, signature; replay one: {REPLAY} SEED:INDEX)\n")
    for (cls, command, sig), rs in list(groups.items())[:max_groups]:
        w(f"\n[{len(rs)}] {cls} {command}: {sig}\n")
        for r in rs[:examples]:
            w(f"    {r['id']} {r['scenario']} {r['role']}: {r['what'][:110]}\n")
            if r["message"]:
                w(f"      {r['message'][:160]}\n")
    for flag, title in (("silently_wrong", ("silently wrong candidates (exit 0, a value a strict reader "
                                            "refuses, result changed, no warning)")),
                        ("accounting_unbalanced", "accounting that does not balance (exit 0)")):
        hit = [r for r in records if flag in r["flags"]]
        if hit:
            w(f"\n{title}: {len(hit)}\n")
            for r in hit[:30]:
                extra = r.get("changed", [])[:3] if flag == "silently_wrong" else r.get("unbalanced", [])[:1]
                w(f"    {r['id']} {r['scenario']} {r['role']}: {r['what'][:100]}  {extra}\n")
    noisy = [r for r in records if "stray_stderr" in r["flags"]]
    if noisy:
        w(f"\ncases with stray stderr lines (not gnssrel's own messages): {len(noisy)}, e.g. "
          f"{noisy[0]['id']}: {noisy[0]['stderr_tail'][-150:]!r}\n")


def _times(records) -> dict:
    by = defaultdict(list)
    for r in records:
        by[r["command"]].append(r["elapsed_s"])
    return by


def compare(old_records, records, out=sys.stdout, examples=40) -> None:
    """How the cases of an earlier run of the same seed changed class."""
    old = {r["id"]: r for r in old_records}
    moves = Counter((old[r["id"]]["class"], r["class"]) for r in records if r["id"] in old)
    out.write(f"\nagainst the earlier run ({len(old)} cases): " + ", ".join(
        f"{a} -> {b} {n}" for (a, b), n in sorted(moves.items()) if a != b) + "\n")
    worse = [r for r in records if r["id"] in old and r["class"] in FAILING
             and old[r["id"]]["class"] not in FAILING]
    for r in worse[:examples]:
        out.write(f"    new failure {r['id']} {r['command']} ({r['role']}, {r['mutation']}): {r['signature'][:100]}\n")


def _module(signature: str) -> str:
    """'IndexError at io/sp3.py:_read_one: ...' -> 'io/sp3.py'."""
    if " at " not in signature:
        return "?"
    return signature.split(" at ", 1)[1].split(":", 1)[0]


def markdown(records, meta, examples=3) -> str:
    """The failures for the people who fix them: by command, then by module and signature."""
    c = Counter(r["class"] for r in records)
    lines = [f"## {_head(records, meta)}", "",
             "Classes: " + ", ".join(f"{k} {c[k]}" for k in CLASSES)
             + f"; silently-wrong candidates {sum('silently_wrong' in r['flags'] for r in records)}.", "",
             "```", table(records, "command"), "```", ""]
    if meta.get("import_failures"):
        lines += [f"Modules that failed to import when the run started: {meta['import_failures']}", ""]
    groups = failing_groups(records)
    for command in sorted({k[1] for k in groups}):
        lines.append(f"### {command}")
        lines.append("")
        mine = [(k, v) for k, v in groups.items() if k[1] == command]
        for (cls, _, sig), rs in sorted(mine, key=lambda kv: (_module(kv[0][2]), -len(kv[1]))):
            lines.append(f"- **{len(rs)} x {cls}** `{sig}` (module: {_module(sig)})")
            for r in rs[:examples]:
                lines.append(f"  - `{REPLAY} {r['id']}` ({r['scenario']}, {r['role']} damaged): "
                             f"{r['what'][:120]}")
            if rs[0]["message"]:
                lines.append(f"  - message: `{rs[0]['message'][:200]}`")
        lines.append("")
    silent = [r for r in records if "silently_wrong" in r["flags"]]
    if silent:
        lines += [("### silently wrong candidates (exit 0, refusable damage accepted, result changed, "
                   "no warning)"), ""]
        for r in silent[:40]:
            lines.append(f"- `{REPLAY} {r['id']}` {r['command']} ({r['role']}): {r['what'][:120]}; "
                         f"changed {', '.join(r.get('changed', [])[:3])}")
        lines.append("")
    return "\n".join(lines)
