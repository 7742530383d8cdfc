"""Open a GNSS text file whatever its compression.

Handles plain files, gzip (``.gz``), Unix compress (``.Z``), zip (first member)
and Hatanaka-compressed RINEX (``.crx``, ``.??d``, and those inside .gz/.Z).
Readers call :func:`read_text` (whole text) or :func:`read_bytes`; they never
open files themselves, so every reader supports every compression.
"""

from __future__ import annotations

import gzip
import io
import re
import warnings
import zipfile
import zlib
from pathlib import Path

from gnssrel.errors import FileFormatError

_HATANAKA_NAME = re.compile(r"(\.crx|\.\d\dd)$", re.IGNORECASE)


def _strip_compression_suffix(name: str) -> str:
    for suffix in (".gz", ".Z", ".z", ".zip", ".ZIP"):
        if name.endswith(suffix):
            return name[: -len(suffix)]
    return name


def read_bytes(path: str | Path, ledger=None) -> bytes:
    """Return the decompressed content of ``path`` (Hatanaka expanded too).

    A damaged compressed stream (gzip, .Z, zip) is a :class:`FileFormatError` naming the
    file.  The Hatanaka decompressor's own warnings (e.g. it skipped epochs after a damaged
    line) become warnings of ours: kept in ``ledger`` (:class:`gnssrel.accounting.Ledger`)
    when one is given, else issued as Python warnings naming the file.
    """
    return open_log(path, ledger).data


class Opened:
    """A decompressed file: ``data`` (bytes), ``hatanaka`` (the input was Hatanaka text),
    ``hatanaka_epochs`` (epoch records counted in the Hatanaka text when its decompressor
    warned, else None) and ``notes`` ((message, line or None) from the decompressor)."""

    def __init__(self, data: bytes, hatanaka: bool = False, hatanaka_epochs: int | None = None,
                 notes: list | None = None):
        self.data, self.hatanaka, self.hatanaka_epochs = data, hatanaka, hatanaka_epochs
        self.notes = notes or []

    @property
    def hatanaka_gave_up(self) -> bool:
        """The decompressor skipped the rest of the file after a damaged line: the last epoch
        it wrote may hold values of the wrong satellites (a repeated or lost data line shifts them)."""
        return any("not found before EOF" in message for message, _ in self.notes)


def open_log(path: str | Path, ledger=None) -> Opened:
    """Decompress ``path`` whatever its compression; see :func:`read_bytes`."""
    path = Path(path)
    try:
        raw = path.read_bytes()
    except FileNotFoundError:
        raise FileFormatError("no such file", path) from None
    except IsADirectoryError:
        raise FileFormatError("is a directory, not a file", path) from None
    except OSError as exc:
        raise FileFormatError(f"cannot read file ({exc.strerror})", path) from None
    try:
        if raw[:2] == b"\x1f\x8b":
            raw = gzip.decompress(raw)
        elif raw[:2] == b"\x1f\x9d":
            import unlzw3

            raw = unlzw3.unlzw(raw)
        elif raw[:4] == b"PK\x03\x04":
            with zipfile.ZipFile(io.BytesIO(raw)) as archive:
                names = [n for n in archive.namelist() if not n.endswith("/")]
                if not names:
                    raise FileFormatError("zip archive holds no file", path)
                raw = archive.read(names[0])
    except FileFormatError:
        raise
    except (OSError, EOFError, ValueError, IndexError, KeyError, RuntimeError, NotImplementedError,
            zlib.error, zipfile.BadZipFile) as exc:
        # gzip.BadGzipFile is an OSError; unlzw3 raises ValueError/IndexError on bad codes;
        # zip raises BadZipFile, RuntimeError (encrypted), NotImplementedError (method).
        reason = str(exc).strip().splitlines()[0] if str(exc).strip() else type(exc).__name__
        raise FileFormatError(f"compressed file is damaged or truncated ({reason})", path) from None
    # Compact RINEX is recognised by its first header line (label "CRINEX VERS   / TYPE",
    # Hatanaka's format 1.0/3.0), whatever the file is called.
    if b"CRINEX VERS" in raw[:200]:
        opened = _expand_hatanaka(raw, path)
        for message, line in opened.notes:
            if ledger is not None:
                ledger.warn(message, path, line)
            else:
                warnings.warn(f"{path}{'' if line is None else f':{line}'}: {message}", stacklevel=2)
        return opened
    return Opened(raw)


_DECOMPRESSOR_LINE = re.compile(r"line\s+(\d+)", re.IGNORECASE)


def _expand_hatanaka(raw: bytes, path: Path) -> Opened:
    import hatanaka

    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        try:
            data = hatanaka.decompress(raw)
        except Exception as exc:  # noqa: BLE001 -- the package raises several kinds
            first = str(exc).strip().splitlines()
            reason = first[0] if first else type(exc).__name__
            m = _DECOMPRESSOR_LINE.search(reason)
            raise FileFormatError(f"Hatanaka-compressed RINEX cannot be expanded ({reason})", path,
                                  int(m.group(1)) if m else None) from None
    notes = []
    for w in caught:
        text = " ".join(str(w.message).split())
        text = re.sub(r"^crx2rnx:\s*", "", text)
        m = _DECOMPRESSOR_LINE.search(text)
        notes.append((f"Hatanaka decompression: {text}", int(m.group(1)) if m else None))
    epochs = _hatanaka_epoch_lines(raw) if notes else None
    return Opened(data, hatanaka=True, hatanaka_epochs=epochs, notes=notes)


def _hatanaka_epoch_lines(raw: bytes) -> int | None:
    """Epoch records in a Hatanaka text (compact RINEX 1.0 and 3.0), counted by walking it.

    Each record is an epoch line, a receiver-clock line and one data line per satellite.
    The epoch line is '&' (1.0) or '>' (3.0) followed by the rest of the RINEX epoch line
    when the epoch is initialized, else its character difference to the previous epoch
    line (blank = unchanged, '&' = now blank); the satellite count sits in columns 30-32
    (RINEX 2.11 table A2) or 33-35 (RINEX 3.05 table A13) of the rebuilt line.  Where a
    line that should be an epoch line cannot be one (a damaged or repeated line), the walk
    moves on line by line to the next line that can.
    """
    end = raw.find(b"END OF HEADER")
    if end < 0:
        return None
    text = raw[raw.find(b"\n", end) + 1:].replace(b"\r", b"").decode("ascii", "replace")
    body = text.split("\n")
    v3 = raw[:20].lstrip().startswith(b"3")
    count_cols = slice(32, 35) if v3 else slice(29, 32)
    previous = ""
    epochs = i = 0
    while i < len(body):
        line = body[i]
        if line[:1] in ("&", ">"):
            rebuilt = (">" if v3 else " ") + line[1:]
        elif line[:2] == "  " and previous:
            width = max(len(previous), len(line))
            old, new = previous.ljust(width), line.ljust(width)
            rebuilt = "".join(o if c == " " else (" " if c == "&" else c) for o, c in zip(old, new))
        else:
            i += 1  # not an epoch line where one should be: move on
            continue
        field = rebuilt[count_cols].strip()
        if not field.isdigit():
            i += 1
            continue
        previous = rebuilt.rstrip()
        epochs += 1
        i += 2 + int(field)
    return epochs


def read_text(path: str | Path, ledger=None) -> str:
    """Return the decompressed content of ``path`` as text (ASCII, lenient)."""
    return read_bytes(path, ledger).decode("ascii", errors="replace")
