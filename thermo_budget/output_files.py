"""What the commands write: output files, JSON text and warnings.

Every output file is written whole to a temporary file in its own folder and then renamed into
place (`write_atomically`), so that a reader never sees half a file, a full disk leaves the old
file as it was, and an output path that is a hard link to an input replaces the link, never the
input's contents. `check_output_paths` refuses such a path before any work, comparing files by
device and inode (`os.path.samefile`), not by name. JSON is written strictly (`json_text`): a
non-finite number is refused naming it, or, where the caller asks, written as null.
"""
from __future__ import annotations

import io
import json
import math
import os
import sys
import tempfile
from pathlib import Path

from .errors import ScenarioError


def _same_file(a: Path, b: Path) -> bool:
    """The same file on disk: by device and inode where both exist (a hard link, a symbolic link or
    another spelling of the path), else by the resolved path."""
    try:
        if a.exists() and b.exists():
            return os.path.samefile(a, b)
        return a.resolve() == b.resolve()
    except (OSError, ValueError):    # e.g. a NUL byte in the name: not an existing file
        return False


# The figure formats save_figure writes (matplotlib's own writers; a name without a suffix is PNG).
FIGURE_FORMATS = ("eps", "jpeg", "jpg", "pdf", "pgf", "png", "ps", "raw", "rgba", "svg", "svgz", "tif", "tiff", "webp")


def check_output_paths(inputs: dict, outputs: dict, figures=()) -> None:
    """Before any work: every output path (outputs: option -> path, None where not given) must be
    in an existing folder, not a folder itself, not one of the input files (inputs: name -> path)
    and not another output; those of the options in `figures` must name a format of FIGURE_FORMATS.
    Raises ScenarioError naming the option."""
    seen = [(Path(path), name) for name, path in inputs.items() if path is not None]
    for option, value in outputs.items():
        if not value:
            continue
        path = Path(value)
        if option in figures and path.suffix.lstrip(".").lower() not in FIGURE_FORMATS + ("",):
            raise ScenarioError(option, value, "a figure file ending in one of ." + ", .".join(FIGURE_FORMATS))
        try:
            parent_ok, is_dir = path.parent.is_dir(), path.is_dir()
        except (OSError, ValueError):
            raise ScenarioError(option, value, "a file name the system accepts") from None
        if not parent_ok:
            raise ScenarioError(option, value, f"a file in an existing folder ({path.parent} does not exist)")
        if is_dir:
            raise ScenarioError(option, value, "a file name, not a folder")
        for other, name in seen:
            if _same_file(path, other):
                raise ScenarioError(option, value, f"a new file name, not the {name} file it would overwrite")
        seen.append((path, option))


def write_atomically(path, data: bytes | str) -> None:
    """Write data (text is written as UTF-8) to path: to a temporary file in the same folder first,
    flushed to disk, then renamed over path. On any failure the temporary file is removed and path
    is left as it was."""
    path = Path(path)
    if isinstance(data, str):
        payload = data.encode("utf-8")
    elif isinstance(data, (bytes, bytearray, memoryview)):
        payload = bytes(data)
    else:
        raise TypeError(f"write_atomically takes text or bytes, not {type(data).__name__}")
    handle, temporary = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name[:40]}.", suffix=".part")
    try:
        with os.fdopen(handle, "wb") as stream:
            stream.write(payload)
            stream.flush()
            os.fsync(stream.fileno())
        try:
            os.chmod(temporary, 0o666 & ~_umask())
        except OSError:
            pass
        os.replace(temporary, path)
    except BaseException:
        try:
            os.unlink(temporary)
        except OSError:
            pass
        raise


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


def save_figure(figure, path, **savefig_options) -> None:
    """A matplotlib figure saved to path (its format from the file's suffix, PNG without one),
    through write_atomically."""
    suffix = Path(path).suffix.lstrip(".").lower() or "png"
    buffer = io.BytesIO()
    figure.savefig(buffer, format=suffix, **savefig_options)
    write_atomically(path, buffer.getvalue())


def check_finite(result, path: str = "") -> None:
    """Every number in a result (nested dicts and lists) is finite, or ScenarioError names it."""
    items = result.items() if isinstance(result, dict) else enumerate(result) if isinstance(result, (list, tuple)) else ()
    for key, value in items:
        where = f"{path}.{key}" if path and isinstance(key, str) else f"{path}[{key}]" if path else str(key)
        if isinstance(value, float) and not math.isfinite(value):
            raise ScenarioError("scenario", f"{where} = {value}",
                                "inputs for which every answer is finite (one of the values above gave a "
                                f"non-finite {where}; check its units)")
        check_finite(value, where)


def finite_or_null(value):
    """A copy of value (nested dicts and lists) with every non-finite float replaced by None."""
    if isinstance(value, dict):
        return {key: finite_or_null(v) for key, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [finite_or_null(v) for v in value]
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return value


def json_text(value, indent: int | None = None, non_finite: str = "refuse") -> str:
    """value as strict JSON (no NaN or Infinity, which JSON does not have).
    non_finite : "refuse" (ScenarioError naming the first non-finite number) or "null" (written as
    null, for a stream that must go on, e.g. the live watch)."""
    if non_finite == "null":
        value = finite_or_null(value)
    else:
        check_finite(value)
    return json.dumps(value, indent=indent, allow_nan=False)


def print_warnings(messages) -> None:
    """Warnings about accepted input, one line each on stderr ("warning: ...")."""
    for message in messages:
        print(f"warning: {message}", file=sys.stderr, flush=True)
