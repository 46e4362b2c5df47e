"""Atomic file writes: every file goes to a temporary name beside its target, then is renamed.

A failure part-way leaves the target untouched (no partial or corrupted output file).
"""

from __future__ import annotations

import contextlib
import os
import tempfile
from pathlib import Path


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


#: Mode of new files: what ``open()`` would give (0o666 less the umask). ``mkstemp`` makes its
#: temporary file 0o600, which would otherwise leave every output unreadable to other users.
NEW_FILE_MODE = 0o666 & ~_umask()


@contextlib.contextmanager
def writing(path, mode: str = "w", encoding: str | None = "utf-8"):
    """Context manager yielding a file object; the target appears only if the block succeeds.

    The file is written under a temporary name in the target's folder and renamed into place
    (an atomic rename on POSIX file systems); on an exception the temporary file is removed.

    Parameters
    ----------
    path : str or pathlib.Path
        The target file.
    mode : str, optional
        ``"w"`` (text) or ``"wb"`` (bytes).
    encoding : str, optional
        Text encoding.

    Returns
    -------
    contextlib.AbstractContextManager
        Yields the open temporary file.

    Raises
    ------
    OutputError
        The folder cannot be written (full, read-only, missing); nothing is left behind.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> target = pathlib.Path(tempfile.mkdtemp()) / "out.txt"
    >>> with writing(target) as f:
    ...     _ = f.write("hello")
    >>> target.read_text()
    'hello'

    References
    ----------
    IEEE Std 1003.1-2017 (POSIX), ``rename()``: the replacement of the target is atomic.
    """
    path = Path(path)
    if path.parent and not path.parent.exists():
        path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".part", dir=path.parent or ".")
    try:
        with os.fdopen(fd, mode, encoding=None if "b" in mode else encoding,
                       newline=None if "b" in mode else "") as f:
            yield f
        try:
            mode = os.stat(path).st_mode & 0o7777   # an existing file keeps its mode
        except FileNotFoundError:
            mode = NEW_FILE_MODE
        os.chmod(tmp, mode)
        os.replace(tmp, path)
    except BaseException:
        with contextlib.suppress(FileNotFoundError):
            os.unlink(tmp)
        raise


def write_text(path, text: str) -> None:
    """Write text to ``path`` atomically (:func:`writing`).

    Parameters
    ----------
    path : str or pathlib.Path
        The target file.
    text : str
        The content (UTF-8).

    Returns
    -------
    None

    Raises
    ------
    OutputError
        The folder cannot be written; nothing is left behind.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> target = pathlib.Path(tempfile.mkdtemp()) / "a.txt"
    >>> write_text(target, "x = 1\\n")
    >>> target.read_text()
    'x = 1\\n'

    References
    ----------
    IEEE Std 1003.1-2017 (POSIX), ``rename()``.
    """
    with writing(path, "w") as f:
        f.write(text)


def write_bytes(path, data: bytes) -> None:
    """Write bytes to ``path`` atomically (:func:`writing`).

    Parameters
    ----------
    path : str or pathlib.Path
        The target file.
    data : bytes
        The content.

    Returns
    -------
    None

    Raises
    ------
    OutputError
        The folder cannot be written; nothing is left behind.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> target = pathlib.Path(tempfile.mkdtemp()) / "a.bin"
    >>> write_bytes(target, b"\\x00\\x01")
    >>> target.read_bytes()
    b'\\x00\\x01'

    References
    ----------
    IEEE Std 1003.1-2017 (POSIX), ``rename()``.
    """
    with writing(path, "wb") as f:
        f.write(data)


#: Metadata that would change from run to run, per format: left out so that the same figure
#: gives the same bytes (SVG: its ``Date``; PDF: ``CreationDate``; PNG has none).
_VOLATILE_METADATA = {"svg": {"Date": None}, "pdf": {"CreationDate": None}}


def save_figure(fig, path, **kwargs) -> None:
    """Save a matplotlib figure atomically, byte-identical from run to run.

    The format comes from the suffix of ``path``; no date goes in the metadata, and SVG element
    ids (clip paths) are derived from a fixed salt (matplotlib's ``svg.hashsalt``) instead of
    random ones.

    Parameters
    ----------
    fig : matplotlib.figure.Figure
        The figure.
    path : str or pathlib.Path
        The target file (``.png``, ``.svg``, ``.pdf``).

    Returns
    -------
    None

    Raises
    ------
    OutputError
        The folder cannot be written; nothing is left behind.

    Examples
    --------
    >>> import tempfile, pathlib
    >>> from matplotlib.figure import Figure
    >>> target = pathlib.Path(tempfile.mkdtemp()) / "f.svg"
    >>> save_figure(Figure(), target)
    >>> target.exists()
    True

    References
    ----------
    Hunter, J. D., "Matplotlib: A 2D graphics environment", Computing in Science & Engineering
    9(3), 90 (2007); IEEE Std 1003.1-2017 (POSIX), ``rename()``.
    """
    import matplotlib  # lazy: heavy library (matplotlib)
    path = Path(path)
    fmt = path.suffix.lstrip(".").lower() or "png"
    meta = dict(_VOLATILE_METADATA.get(fmt, {}))
    meta.update(kwargs.pop("metadata", None) or {})
    if meta:
        kwargs["metadata"] = meta
    with matplotlib.rc_context({"svg.hashsalt": "librate"}):
        with writing(path, "wb") as f:
            fig.savefig(f, format=fmt, **kwargs)
