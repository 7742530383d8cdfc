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
import zipfile
from pathlib import Path

from gnssrel.errors import FileFormatError

_HATANAKA_NAME = re.compile(r"(\.crx|\.\d\dd)$", re.IGNORECASE)


def _strip_compression_suffix(name: str) -> str:
    for suffix in (".gz", ".Z", ".z", ".zip", ".ZIP"):
        if name.endswith(suffix):
            return name[: -len(suffix)]
    return name


def read_bytes(path: str | Path) -> bytes:
    """Return the decompressed content of ``path`` (Hatanaka expanded too)."""
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
    except (OSError, EOFError, ValueError, zipfile.BadZipFile) as exc:
        raise FileFormatError(f"compressed file is damaged or truncated ({exc})", path) from None
    inner = _strip_compression_suffix(path.name)
    if _HATANAKA_NAME.search(inner) or raw[:20].lstrip().startswith(b"1.0") and b"COMPACT RINEX" in raw[:200] \
            or b"CRINEX VERS" in raw[:100]:
        raw = _expand_hatanaka(raw, path)
    return raw


def _expand_hatanaka(raw: bytes, path: Path) -> bytes:
    if b"CRINEX VERS" not in raw[:200]:
        return raw  # named like Hatanaka but plain RINEX inside
    import hatanaka

    try:
        return hatanaka.decompress(raw)
    except Exception as exc:  # the package raises several kinds
        first = str(exc).strip().splitlines()
        reason = first[0] if first else type(exc).__name__
        raise FileFormatError(f"Hatanaka-compressed RINEX cannot be expanded ({reason})", path) from None


def read_text(path: str | Path) -> str:
    """Return the decompressed content of ``path`` as text (ASCII, lenient)."""
    return read_bytes(path).decode("ascii", errors="replace")
