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


def _printable(text: str) -> str:
    """One line of printable text: control characters (newlines, escapes) shown as escapes."""
    return "".join(ch if ch.isprintable() else ch.encode("unicode_escape").decode("ascii") for ch in text)


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
            parts.append(self.file)
        if self.key:
            parts.append(self.key)
        parts.append(self.message)
        return _printable(": ".join(parts))

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
