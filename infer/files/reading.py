"""Opening and decoding the files a user gives qhat, with one wording for every failure.

Study, claim and loci files are UTF-8 text (a leading UTF-8 byte-order mark is
dropped). Whatever goes wrong ends as one :class:`~infer.errors.InputError` whose
source is the file name as the user gave it:

* ``cannot read the file: no such file`` (also ``it is a folder``, ``permission denied``
  or the system's own reason);
* ``the file is not UTF-8 text (byte 0xe9 at offset 52); save it as UTF-8``, the offset
  counted in bytes from the start of the file, from 0 (or ``(it starts with a UTF-16
  byte-order mark)``);
* ``invalid TOML: ...`` with the line and column of the TOML parser.

:func:`read_text` returns a whole file; :func:`open_text` opens one to read line by
line (the loci CSV, which may be large) and turns a decoding failure met on the way into
the same message.
"""

from __future__ import annotations

import codecs
import errno
import io
import os
from pathlib import Path

from infer.errors import InputError

__all__ = ["read_text", "open_text", "TextFile", "not_utf8", "invalid_toml"]

#: errno -> the reason given after "cannot read the file: "
_REASONS = {
    errno.ENOENT: "no such file",
    errno.EISDIR: "it is a folder",
    errno.EACCES: "permission denied",
    errno.EPERM: "permission denied",
    errno.ENOTDIR: "no such file (a part of the path is not a folder)",
}
_UTF16_MARKS = (codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)
_CHUNK = 1 << 20


def _cannot_read(source: str, error: OSError) -> InputError:
    reason = _REASONS.get(error.errno)
    if reason is None:
        text = error.strerror or type(error).__name__
        reason = text[:1].lower() + text[1:]
    return InputError(f"cannot read the file: {reason}", source=source)


def _open_binary(path) -> io.BufferedReader:
    """Open ``path`` for reading bytes, refusing folders and UTF-16 files."""
    source = str(path)
    if Path(path).is_dir():   # some systems open a folder without complaint
        raise InputError("cannot read the file: it is a folder", source=source)
    try:
        handle = open(path, "rb")   # closed by the caller
    except OSError as error:
        raise _cannot_read(source, error) from None
    try:
        start = handle.peek(4)[:4]
    except OSError as error:
        handle.close()
        raise _cannot_read(source, error) from None
    if start.startswith(_UTF16_MARKS):
        handle.close()
        raise InputError("the file is not UTF-8 text (it starts with a UTF-16 byte-order "
                         "mark); save it as UTF-8", source=source)
    return handle


def _not_utf8_at(source: str, offset: int, byte: int) -> InputError:
    return InputError(f"the file is not UTF-8 text (byte 0x{byte:02x} at offset {offset}); "
                      "save it as UTF-8", source=source)


def not_utf8(path) -> InputError:
    """The error for a file that failed to decode, naming its first bad byte.

    The file is read again, in chunks, to find the byte: a decoding error met while
    reading line by line knows only its place in the current buffer.

    Parameters
    ----------
    path : str or os.PathLike
        The file, named in the error as given.

    Returns
    -------
    infer.errors.InputError
        To be raised by the caller.
    """
    source = str(path)
    decoder = codecs.getincrementaldecoder("utf-8")()
    offset = 0
    try:
        with open(path, "rb") as handle:
            while chunk := handle.read(_CHUNK):
                pending = len(decoder.getstate()[0])
                try:
                    decoder.decode(chunk)
                except UnicodeDecodeError as error:
                    return _not_utf8_at(source, offset - pending + error.start,
                                        error.object[error.start])
                offset += len(chunk)
            pending = len(decoder.getstate()[0])
            try:
                decoder.decode(b"", final=True)
            except UnicodeDecodeError as error:   # a sequence cut off by the end of file
                return _not_utf8_at(source, offset - pending + error.start,
                                    error.object[error.start])
    except OSError as error:
        return _cannot_read(source, error)
    return InputError("the file is not UTF-8 text; save it as UTF-8", source=source)


def read_text(path: str | os.PathLike) -> str:
    """The whole file as text, decoded as UTF-8 with a leading byte-order mark dropped.

    Parameters
    ----------
    path : str or os.PathLike
        The file; error messages name it as given.

    Returns
    -------
    str

    Raises
    ------
    infer.errors.InputError
        Missing file, a folder, no permission, not UTF-8 (module docstring).
    """
    source = str(path)
    with _open_binary(path) as handle:
        try:
            raw = handle.read()
        except OSError as error:
            raise _cannot_read(source, error) from None
    try:
        text = raw.decode("utf-8")   # a byte-order mark is valid UTF-8: offsets stay file offsets
    except UnicodeDecodeError as error:
        raise _not_utf8_at(source, error.start, raw[error.start]) from None
    return text.removeprefix("\ufeff")


class TextFile:
    """A text file read line by line whose decoding failure is an :class:`InputError`.

    Made by :func:`open_text`; iterate over it (as :func:`csv.reader` does) and close it,
    or use it as a context manager.
    """

    def __init__(self, path, *, newline: str | None = None):
        self.path = path
        self._binary = _open_binary(path)
        self._text = io.TextIOWrapper(self._binary, encoding="utf-8-sig", newline=newline)

    def __iter__(self):
        return self

    def __next__(self) -> str:
        try:
            return next(self._text)
        except UnicodeDecodeError:
            raise not_utf8(self.path) from None
        except OSError as error:
            raise _cannot_read(str(self.path), error) from None

    def read(self, size: int = -1) -> str:
        """Read up to ``size`` characters (all that remain by default)."""
        try:
            return self._text.read(size)
        except UnicodeDecodeError:
            raise not_utf8(self.path) from None

    def close(self) -> None:
        """Close the file."""
        self._text.close()

    def __enter__(self) -> TextFile:
        return self

    def __exit__(self, *exc) -> None:
        self.close()


def open_text(path: str | os.PathLike, *, newline: str | None = None) -> TextFile:
    """Open a UTF-8 text file to read line by line.

    Parameters
    ----------
    path : str or os.PathLike
        The file; error messages name it as given.
    newline : str, optional
        As for :func:`open` (``""`` for :mod:`csv`).

    Returns
    -------
    TextFile
        Iterable over lines; a line that does not decode raises the
        ``not UTF-8`` :class:`~infer.errors.InputError`.

    Raises
    ------
    infer.errors.InputError
        Missing file, a folder, no permission, a UTF-16 file.
    """
    return TextFile(path, newline=newline)


def invalid_toml(error: Exception, *, source: str) -> InputError:
    """The error for a TOML syntax error (``tomllib.TOMLDecodeError``), one line.

    Parameters
    ----------
    error : tomllib.TOMLDecodeError
        The parser's error; its message carries the line and column.
    source : str
        The file name as the user gave it.

    Returns
    -------
    infer.errors.InputError
        ``invalid TOML: <the parser's message, first letter in lower case>``.
    """
    text = str(error)
    return InputError(f"invalid TOML: {text[:1].lower() + text[1:]}", source=source)
