"""Typed errors raised by the fdsolver core.

The core never prints or exits; it raises these. The command line turns a
:class:`CaseError` into one line on stderr and exit code 2.
"""

from __future__ import annotations


def did_you_mean(word, choices, cutoff: float = 0.6) -> str:
    """``"; did you mean 'x'?"`` for the closest of ``choices`` to ``word`` (difflib), or ``""``."""
    import difflib

    close = difflib.get_close_matches(str(word), [str(c) for c in choices], n=1, cutoff=cutoff)
    return f"; did you mean '{close[0]}'?" if close else ""


def printable(text, *, lines: bool = False) -> str:
    """Text safe to echo to a terminal: control and format characters (escapes, carriage returns, bells,
    bidi overrides) shown as Python escapes (``\\x1b``).  One line, unless ``lines``: then newlines are kept
    and everything else on each line is escaped.  The one helper for every text fdsolver prints."""
    text = str(text)
    if lines:
        return "\n".join(printable(line) for line in text.split("\n"))
    if text.isprintable():
        return text
    return "".join(ch if ch.isprintable() else ch.encode("unicode_escape").decode("ascii") for ch in text)


_printable = printable  # the name it had first

#: most characters of a path (or key) shown in a message, and of a whole message line
MAX_PATH_SHOWN, MAX_LINE = 240, 900


def shorten(text, limit: int = 160) -> str:
    """``text`` (a path, a value) cut in the middle to at most ``limit`` characters, for a one-line message."""
    text = str(text)
    if len(text) <= limit:
        return text
    keep = (limit - 5) // 2
    return f"{text[:keep]}[...]{text[-keep:]}"


class FdsolverError(Exception):
    """Base class of every error fdsolver raises on purpose."""


class CaseError(FdsolverError, ValueError):
    """Bad input: a case file, a table, an option or an archive.

    ``file`` is the path of the offending file (or ``None`` for input built in
    code or given on the command line), ``key`` the dotted key inside it
    (``"potential[2].width"``, ``"--vary"``) and ``message`` what is wrong and
    what to do.  ``str(err)`` is the single line shown to a user.
    """

    def __init__(self, message: str, *, file: str | None = None, key: str | None = None):
        self.message = message
        self.file = None if file is None else str(file)
        self.key = key
        super().__init__(self.__str__())

    def __str__(self) -> str:
        parts = []
        if self.file:
            parts.append(shorten(self.file, MAX_PATH_SHOWN))
        if self.key:
            parts.append(shorten(self.key, MAX_PATH_SHOWN))
        parts.append(self.message)
        return shorten(printable(": ".join(parts)), MAX_LINE)

    def located(self, *, file: str | None = None, key_prefix: str | None = None) -> "CaseError":
        """Return a copy with the file filled in and the key prefixed."""
        key = self.key
        if key_prefix:
            key = key_prefix if not key else f"{key_prefix}.{key}"
        return type(self)(self.message, file=self.file or file, key=key)


class BudgetError(CaseError):
    """A request would need more memory or grid points than the set budget."""


class ArchiveError(CaseError):
    """A file is not a readable fdsolver archive (truncated, corrupt, foreign)."""


def write_failure(exc: OSError, path, key: str | None = "--output") -> CaseError:
    """The one line for an OSError met while writing ``path``: a full disk, a read-only file system, a folder
    without write permission, a name too long, ...; the CLI shows it with exit code 2."""
    import errno
    import os

    folder = os.path.dirname(os.path.abspath(str(path))) or "."
    shown, where = shorten(path), shorten(folder)
    code = getattr(exc, "errno", None)
    if code in (errno.ENOSPC, errno.EDQUOT):
        what = f"the disk holding '{where}' is full (or the quota is used up); free some space or write elsewhere"
    elif code == errno.EROFS:
        what = f"the file system holding '{where}' is read-only; write elsewhere"
    elif code in (errno.EACCES, errno.EPERM):
        what = f"no permission to write in '{where}'; choose a folder you can write to"
    elif code == errno.ENAMETOOLONG:
        what = f"the name '{shown}' (or the temporary name made from it) is too long for the file system; shorten it"
    elif code == errno.ENOENT:
        what = f"folder '{where}' does not exist; create it first"
    elif code == errno.EISDIR:
        what = f"'{shown}' is a folder; give a file name"
    else:
        what = f"cannot write '{shown}': {exc.strerror or exc}"
    return CaseError(what, key=key)
