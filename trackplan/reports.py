"""Writing results to files: atomically, never over an input.

Every file trackplan writes goes first to a temporary name in the target folder
and is then renamed into place (``os.replace``), so a crash never leaves half a
file. :func:`prepare_out_dir` creates the output folder and refuses a folder
that would put an output over one of the run's input files.
"""

from __future__ import annotations

import os
import tempfile
from pathlib import Path
from typing import Callable, Iterable

from trackplan.errors import InputError


def prepare_out_dir(out: str | Path, inputs: Iterable[str | Path] = ()) -> Path:
    """Create ``out`` (and parents) and return it as a Path.

    Raises
    ------
    InputError
        ``out`` exists and is not a folder, or cannot be created.
    """
    out = Path(out)
    if out.exists() and not out.is_dir():
        raise InputError("exists and is not a folder; give a folder for the output files", f"--out {out}")
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise InputError(f"cannot create the folder ({exc.strerror})", f"--out {out}") from None
    out._trackplan_inputs = {Path(p).resolve() for p in inputs}  # type: ignore[attr-defined]
    return out


def _guard(path: Path, inputs: Iterable[Path]) -> None:
    rp = path.resolve()
    if rp in set(inputs):
        raise InputError("would overwrite an input file; choose another --out folder", str(path))


def write_atomic(path: str | Path, writer: Callable[[Path], None], inputs: Iterable[str | Path] = ()) -> Path:
    """Write a file by calling ``writer(tmp_path)`` then renaming into place.

    Parameters
    ----------
    path : path
        Final file name.
    writer : callable
        Function that writes the whole file at the temporary path it is given.
    inputs : iterable of paths
        Input files of the run, never overwritten.
    """
    path = Path(path)
    _guard(path, [Path(p).resolve() for p in inputs])
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part", dir=path.parent)
    os.close(fd)
    tmp_path = Path(tmp)
    try:
        writer(tmp_path)
        os.replace(tmp_path, path)
    except BaseException:
        tmp_path.unlink(missing_ok=True)
        raise
    return path


def write_text(path: str | Path, text: str, inputs: Iterable[str | Path] = ()) -> Path:
    """Write a text file atomically (UTF-8)."""
    return write_atomic(path, lambda p: p.write_text(text, encoding="utf-8"), inputs)


def write_csv(path: str | Path, frame, inputs: Iterable[str | Path] = ()) -> Path:
    """Write a pandas DataFrame as CSV atomically (index not written)."""
    return write_atomic(path, lambda p: frame.to_csv(p, index=False), inputs)


def save_figure(path: str | Path, fig, inputs: Iterable[str | Path] = (), dpi: int = 120) -> Path:
    """Save a matplotlib figure atomically and close it."""
    import matplotlib.pyplot as plt

    fmt = Path(path).suffix.lstrip(".") or "png"
    try:
        return write_atomic(path, lambda p: fig.savefig(p, dpi=dpi, format=fmt, bbox_inches="tight"), inputs)
    finally:
        plt.close(fig)


def matplotlib_backend() -> None:
    """Select the non-interactive Agg backend (no screen on CI or servers)."""
    import matplotlib

    matplotlib.use("Agg")
