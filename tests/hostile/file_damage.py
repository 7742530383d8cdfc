"""Mutations of a whole file or its lines: cut, flipped, reordered, re-encoded, re-packed.

Truncation, byte flips, deleted/duplicated/swapped lines, missing header lines, wrong
versions, long lines, empty and binary files, damaged gzip/zip, line endings, tabs,
non-UTF-8 bytes, one kind of file given as another, Hatanaka.  Each is
``(rng, data, kind, ctx) -> Mutated | None``.
"""

from __future__ import annotations

import gzip
import io
import re
import zipfile

from .damage import NUMBER, Mutated, fit, header_length, line_end, lines_of, pick_line
from .seeds import EPOCH_LINE


def truncate(rng, data, kind, ctx):
    lines = lines_of(data)
    how = rng.choice(["byte", "line", "header", "tiny"])
    if how == "byte":
        at = rng.randrange(1, max(2, len(data)))
    elif how == "line":
        at = len(b"".join(lines[:rng.randrange(1, max(2, len(lines)))]))
    elif how == "header":
        h = max(1, header_length(kind, lines))
        at = len(b"".join(lines[:rng.randrange(1, h + 1)]))
    else:
        at = rng.randrange(1, 81)
    return Mutated(data[:at], f"truncate ({how}) at byte {at} of {len(data)}")


def byte_flip(rng, data, kind, ctx):
    buf = bytearray(data)
    spots = []
    for _ in range(rng.randint(1, 4)):
        k = rng.randrange(len(buf))
        buf[k] ^= rng.randint(1, 255)
        spots.append(f"{k}:{data[k]:02x}->{buf[k]:02x}")
    return Mutated(bytes(buf), f"byte flip at {', '.join(spots)}")


def line_edit(rng, data, kind, ctx):
    lines = lines_of(data)
    op = rng.choice(["delete", "duplicate", "swap-adjacent", "swap-any", "blank-insert"])
    where = "body" if rng.random() < 0.75 else "any"
    i = pick_line(rng, kind, lines, where)
    if i is None:
        return None
    if op == "delete":
        del lines[i]
    elif op == "duplicate":
        lines.insert(i, lines[i])
    elif op == "swap-adjacent" and i + 1 < len(lines):
        lines[i], lines[i + 1] = lines[i + 1], lines[i]
    elif op == "swap-any":
        j = rng.randrange(len(lines))
        lines[i], lines[j] = lines[j], lines[i]
        op = f"swap with line {j + 1}"
    else:
        lines.insert(i, b"\n")
    return Mutated(b"".join(lines), f"line {i + 1}: {op}", line=i + 1)


def header_line_missing(rng, data, kind, ctx):
    lines = lines_of(data)
    h = header_length(kind, lines) or 1
    i = rng.randrange(h)
    gone = lines.pop(i).decode("latin-1").rstrip()
    return Mutated(b"".join(lines), f"header line {i + 1} deleted: {gone[:70]!r}", line=i + 1)


def wrong_version(rng, data, kind, ctx):
    lines = lines_of(data)
    first = lines[0]
    if kind == "sp3":
        c = rng.choice(b"abez?D ")
        lines[0] = first[:1] + bytes([c]) + first[2:]
        return Mutated(b"".join(lines), f"SP3 version character -> {chr(c)!r}", line=1)
    if kind == "csv":
        i = header_length(kind, lines) - 1
        old = lines[i]
        new = rng.choice([old.replace(b"clock_correction_s", b"clock_s"), old.replace(b"time,", b"epoch,"),
                          old.replace(b",sv", b",prn"), b"a;b;c;d;e\n"])
        lines[i] = new
        return Mutated(b"".join(lines), f"CSV column names changed: {new.decode().strip()!r}", line=i + 1)
    if kind == "nmea":
        i = rng.randrange(len(lines))
        new = lines[i].replace(b"$GN", rng.choice([b"$XX", b"!GN", b"$GNX"]), 1)
        lines[i] = new
        return Mutated(b"".join(lines), f"NMEA talker/sentence changed on line {i + 1}", line=i + 1)
    m = NUMBER.search(first)
    if m is None:
        return None
    version = rng.choice(["9.99", "1.00", "5.00", "2.00", "3.99", "0.00", "4.00", "2.10", "3.0x", "-3.04"])
    lines[0] = first[:m.start()] + fit(version, m.end() - m.start()) + first[m.end():]
    return Mutated(b"".join(lines), f"version {m.group().decode()!r} -> {version!r}", line=1)


def long_line(rng, data, kind, ctx):
    lines = lines_of(data)
    i = pick_line(rng, kind, lines, "any")
    n = rng.choice([100, 1000, 100_000, 2_000_000])
    filler = rng.choice([b" ", b"9", b"x", b"1.0E+00 "])
    text, eol = lines[i].rstrip(b"\r\n"), line_end(lines[i])
    lines[i] = text + (filler * n)[:n] + eol
    return Mutated(b"".join(lines), f"line {i + 1} lengthened by {n} x {filler!r}", line=i + 1)


def empty(rng, data, kind, ctx):
    variant = rng.choice([b"", b"\n", b"   \n\n", b"\x00"])
    return Mutated(variant, f"empty file {variant!r}")


def binary(rng, data, kind, ctx):
    n = rng.choice([1, 7, 100, 4096, 70_000])
    head = rng.choice([b"", b"\x1f\x8b", b"\x1f\x9d", b"PK\x03\x04", b"\x89PNG\r\n\x1a\n", b"CRINEX VERS"])
    return Mutated(head + rng.randbytes(n), f"binary: {head!r} + {n} random bytes")


def damaged_archive(rng, data, kind, ctx):
    how = rng.choice(["truncate", "flip", "trailer", "append", "zip-truncate", "zip-flip"])
    if how.startswith("zip"):
        buf = io.BytesIO()
        with zipfile.ZipFile(buf, "w", zipfile.ZIP_DEFLATED) as z:
            z.writestr(zipfile.ZipInfo("member", date_time=(2025, 6, 11, 0, 0, 0)), data)
        packed, suffix = buf.getvalue(), ".zip"
    else:
        packed, suffix = gzip.compress(data, mtime=0), ".gz"
    buf = bytearray(packed)
    if how.endswith("truncate"):
        at = rng.randrange(10, len(buf) - 1)
        buf = buf[:at]
        detail = f"cut at {at} of {len(packed)}"
    elif how.endswith("flip"):
        k = rng.randrange(20, len(buf) - 10)
        buf[k] ^= rng.randint(1, 255)
        detail = f"byte {k} flipped"
    elif how == "trailer":
        k = len(buf) - rng.randint(1, 8)
        buf[k] ^= 0xFF
        detail = f"CRC/length trailer byte {k} flipped"
    else:
        buf += rng.choice([b"\x00" * 10, b"garbage", gzip.compress(b"x")[:5]])
        detail = "bytes appended after the stream"
    return Mutated(bytes(buf), f"damaged {suffix[1:]} ({how}: {detail})", suffix=suffix)


def line_endings(rng, data, kind, ctx):
    how = rng.choice(["crlf", "crlf-some", "cr-only", "no-final-newline"])
    lines = lines_of(data)
    if how == "crlf":
        out = data.replace(b"\n", b"\r\n")
    elif how == "crlf-some":
        picks = set(rng.sample(range(len(lines)), max(1, len(lines) // 10)))
        out = b"".join(line.replace(b"\n", b"\r\n") if k in picks else line for k, line in enumerate(lines))
    elif how == "cr-only":
        out = data.replace(b"\n", b"\r")
    else:
        out = data.rstrip(b"\n")
    return Mutated(out, f"line endings: {how}")


def tabs(rng, data, kind, ctx):
    lines = lines_of(data)
    if rng.random() < 0.3:
        return Mutated(data.replace(b"    ", b"\t"), "every run of 4 spaces replaced by a tab")
    i = pick_line(rng, kind, lines, "any", re.compile(rb" "))
    if i is None:
        return None
    spaces = [m.start() for m in re.finditer(rb" ", lines[i])]
    k = rng.choice(spaces)
    lines[i] = lines[i][:k] + b"\t" + lines[i][k + 1:]
    return Mutated(b"".join(lines), f"line {i + 1} col {k + 1}: space -> tab", line=i + 1)


def non_utf8(rng, data, kind, ctx):
    lines = lines_of(data)
    where = rng.choice(["any", "body", "epoch"])
    i = pick_line(rng, kind, lines, "body", EPOCH_LINE.get(kind)) if where == "epoch" \
        else pick_line(rng, kind, lines, where)
    if i is None:
        return None
    text = lines[i]
    k = rng.randrange(min(len(text), 4 if where == "epoch" else max(1, len(text) - 1)))
    seq = rng.choice([b"\xe9", b"\xff", b"\xc3\x28", b"\x80", b"\xfe\xff", b"\xa0"])
    replace = rng.random() < 0.7
    lines[i] = text[:k] + seq + text[k + (len(seq) if replace else 0):]
    return Mutated(b"".join(lines), f"non-UTF-8 bytes {seq!r} {'over' if replace else 'into'} line {i + 1} col {k + 1}",
                   line=i + 1)


def wrong_kind(rng, data, kind, ctx):
    other = rng.choice([k for k in ctx.seeds if k != kind])
    return Mutated(ctx.seeds[other], f"content of the {other} seed given as {kind}")


def appended(rng, data, kind, ctx):
    tail = rng.choice([b"\x00\x00\x00", b"garbage after the end\n", rng.randbytes(50), data[:200],
                       b"\x1a", b"EOF\n", b"\n\n\n"])
    return Mutated(data + tail, f"{len(tail)} bytes appended: {tail[:20]!r}")


def leading_blank(rng, data, kind, ctx):
    lead = rng.choice([b"\n", b"  \n", b"\xef\xbb\xbf"])
    return Mutated(lead + data, f"file starts with {lead!r}")


def hatanaka(rng, data, kind, ctx):
    """Observation seeds only: the Hatanaka-compressed seed, then one line damaged."""
    packed = ctx.hatanaka[kind]
    lines = lines_of(packed)
    h = next(i for i, line in enumerate(lines) if b"END OF HEADER" in line) + 1
    i = rng.randrange(h, len(lines))
    op = rng.choice(["delete", "duplicate", "swap", "digit", "truncate", "none"])
    if op == "delete":
        del lines[i]
    elif op == "duplicate":
        lines.insert(i, lines[i])
    elif op == "swap" and i + 1 < len(lines):
        lines[i], lines[i + 1] = lines[i + 1], lines[i]
    elif op == "digit":
        digits = [m.start() for m in re.finditer(rb"\d", lines[i])]
        if digits:
            k = rng.choice(digits)
            lines[i] = lines[i][:k] + bytes([rng.choice(b"0123456789x ")]) + lines[i][k + 1:]
    elif op == "truncate":
        lines = lines[:i]
    name = ctx.names[kind]
    rename = name[:-1] + "d" if kind == "obs2" else name.replace("_MO.rnx", "_MO.crx")
    return Mutated(b"".join(lines), f"Hatanaka-compressed, then line {i + 1}: {op}", rename=rename,
                   line=i + 1)
