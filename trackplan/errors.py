"""One error hierarchy for input problems.

Every problem with what a person gave (an option, a file, a field) raises
:class:`InputError`. The command line catches it in one place, prints the
message (what is wrong, where, what is accepted) and exits with code 2,
never with a traceback.

Computation modules name *fields* (``length``, ``rail_temperature``), never
command-line options: the command line (or the section reader) puts the
option, or the file and section, in front (:meth:`InputError.relocated`).
"""

from __future__ import annotations

#: Longest excerpt of a file's content quoted in a message [characters].
EXCERPT_CHARS = 32
#: Longest place (a path, a section, a field) shown in a message [characters]; longer ones are cut.
MAX_WHERE_CHARS = 160


class InputError(ValueError):
    """Bad input: the message names what, where, and what is accepted.

    Parameters
    ----------
    message : str
        What is wrong and what would be accepted.
    where : str, optional
        Where: an option name (``--neutral``), a file with line or field
        (``sections.toml [north-1] rail``), or a bare field name from a
        computation module (``field`` is then set too).
    field : str, optional
        The field the problem is about, when raised by a computation module;
        the caller maps it to an option or to a file and section.
    """

    def __init__(self, message: str, where: str | None = None, field: str | None = None):
        if where is None and field is not None:
            where = field
        if where is not None:
            where = "".join(c if c.isprintable() else "?" for c in where)
        if where is not None and len(where) > MAX_WHERE_CHARS:
            where = where[:MAX_WHERE_CHARS // 2] + "..." + where[-MAX_WHERE_CHARS // 4:]
        self.where = where
        self.field = field
        self.bare_message = message
        super().__init__(f"{where}: {message}" if where else message)

    def relocated(self, where: str) -> "InputError":
        """The same problem placed at ``where`` (an option, or file and section)."""
        return InputError(self.bare_message, where)


def excerpt(value, limit: int = EXCERPT_CHARS) -> str:
    """A short, printable, quoted excerpt of a cell for a message.

    Never more than ``limit`` characters of what a file holds are echoed;
    control and other unprintable characters are shown as ``?``.

    Examples
    --------
    >>> excerpt("abc")
    "'abc'"
    >>> excerpt("x" * 50)
    "'xxxxxxxxxxxxxxxxxxxxxxxxxxxxxxxx...' (50 characters)"
    """
    text = str(value)
    n = len(text)
    short = "".join(c if c.isprintable() else "?" for c in text[:limit])
    if n > limit:
        return f"'{short}...' ({n} characters)"
    return f"'{short}'"
