"""Small RINEX observation texts built in the tests (invented values, real layout).

Layouts: RINEX 3.05 tables A2 (header) and A13 (epoch and satellite records);
RINEX 2.11 tables A1 (header) and A2 (epoch and data records).
"""

from __future__ import annotations

V3_TYPES = {"G": ["C1C", "L1C", "S1C"], "R": ["C1C", "L1C"], "E": ["C1X", "L1X", "S1X"]}
V3_SATS = ["G05", "G07", "R03", "E11"]
V2_TYPES = ["C1", "L1", "L2", "P2", "S1", "S2"]   # 6 types: two data lines per satellite
V2_SATS = ["G05", "G07", "R03"]


def header_line(content: str, label: str) -> str:
    return f"{content:60s}{label}\n"


def value(epoch: int, k: int, j: int) -> float:
    """An invented observation: distinct per epoch, satellite and type, exact in F14.3."""
    return 20_000_000.0 + 1000.0 * epoch + 10.0 * k + j + 0.125


def _header(first, types, time_system, leap, extra_header):
    head = [first, header_line("TEST", "MARKER NAME"),
            header_line("  1000000.0000  2000000.0000  3000000.0000", "APPROX POSITION XYZ"), *types,
            header_line(f"  2021     1     1     0     0    0.0000000     {time_system}",
                        "TIME OF FIRST OBS")]
    if leap is not None:
        head.append(header_line(f"{leap:6d}", "LEAP SECONDS"))
    return "".join(head + list(extra_header) + [header_line("", "END OF HEADER")])


def rinex3(n_epochs=6, sats=V3_SATS, time_system="GPS", leap=18, extra_header=()):
    types = []
    for s, codes in V3_TYPES.items():
        for k in range(0, len(codes), 13):  # 13 types a line, then continuation lines
            lead = f"{s}  {len(codes):3d}" if k == 0 else " " * 6
            listed = "".join(f" {c}" for c in codes[k:k + 13])
            types.append(header_line(lead + listed, "SYS / # / OBS TYPES"))
    head = _header(header_line("     3.05           OBSERVATION DATA    M", "RINEX VERSION / TYPE"), types,
                   time_system, leap, extra_header)
    body = []
    for e in range(n_epochs):
        body.append(f"> 2021 01 01 00 {e // 2:02d} {30 * (e % 2):2d}.0000000  0{len(sats):3d}\n")
        for k, sv in enumerate(sats):
            fields = "".join(f"{value(e, k, j):14.3f} 7" for j in range(len(V3_TYPES[sv[0]])))
            body.append(f"{sv}{fields}\n")
    return head, "".join(body)


def rinex2(n_epochs=6, sats=V2_SATS, time_system="GPS", leap=18, blank_last_line_of=(), extra_header=()):
    """``blank_last_line_of``: satellites whose second data line (P2 S1 S2... here L2 onward) is blank."""
    listed = "".join(f"{t:>6s}" for t in V2_TYPES)
    types = [header_line(f"{len(V2_TYPES):6d}{listed}", "# / TYPES OF OBSERV")]
    head = _header(header_line("     2.11           OBSERVATION DATA    M (MIXED)", "RINEX VERSION / TYPE"),
                   types, time_system, leap, extra_header)
    body = []
    for e in range(n_epochs):
        epoch = f" 21  1  1  0 {e // 2:2d} {30 * (e % 2):2d}.0000000  0{len(sats):3d}"
        body.append(epoch + "".join(sats) + "\n")
        for k, sv in enumerate(sats):
            fields = [f"{value(e, k, j):14.3f} 7" for j in range(len(V2_TYPES))]
            body.append("".join(fields[:5]) + "\n")
            body.append(("" if sv in blank_last_line_of else "".join(fields[5:])) + "\n")
    return head, "".join(body)
