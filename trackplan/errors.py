"""One error tree for the problems the tool reports as plain messages.

::

    TrackplanError            a problem reported as a one-line message, never a traceback
    +-- InputError            bad input: an option, a file, a field (what, where, what is accepted)
    |   +-- UnitKindError     a unit of another kind of quantity ('3 m' where a force is needed)
    +-- ModelError            valid input for which a model cannot give a number
        +-- StabilityError    (trackplan.track) the equilibrium path cannot be followed

The command line catches :class:`TrackplanError` in one place, prints the
message and exits with code 2 (the input, or what it asks of a model, has to
change), never with a traceback; in a section file either kind is a problem of
that section and the other sections are still computed. Anything else is a
fault in trackplan (exit code 3).

Computation modules name *fields* (``length``, ``rail_temperature``), never
command-line options: the command line (or the section reader) puts the
option, or the file and section, in front (:meth:`InputError.relocated`). Advice
in a message that points at a value the user can give is written with
:func:`option_ref` (``{option:season}``): it reads as the field's name, and the
command line shows the option that carries it (``--season``) (:func:`render`).
"""

from __future__ import annotations

import re

#: Longest excerpt of a file's content quoted in a message [characters].
EXCERPT_CHARS = 32
#: Longest place (a path, a section, a field) shown in a message [characters]; longer ones are cut.
MAX_WHERE_CHARS = 160


_OPTION_REF = re.compile(r"\{option:([A-Za-z_]+)\}")


def option_ref(field: str) -> str:
    """A reference, in a message or warning, to the value the user gives as ``field`` (see :func:`render`)."""
    return "{option:" + field + "}"


#: Set by the command line while a command runs: field -> the option that carries it (or None).
OPTION_OF = None


def render(text: str, option_of=None) -> str:
    """``text`` with its :func:`option_ref` references written out: by ``option_of(field)`` (a section
    file's field), by default the running command's option (:data:`OPTION_OF`), else the field's name."""
    option_of = option_of or OPTION_OF
    return _OPTION_REF.sub(lambda m: (option_of(m[1]) if option_of is not None else None) or m[1], str(text))


class TrackplanError(Exception):
    """A problem reported as a plain message: what is wrong and where.

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
        self.template = message  # with its option references (errors.render)
        message = render(message)
        self.bare_message = message
        super().__init__(f"{where}: {message}" if where else message)

    def relocated(self, where: str, option_of=None) -> "TrackplanError":
        """The same problem (same class) placed at ``where`` (an option, or file and section), its
        option references written by ``option_of`` (:func:`render`)."""
        return type(self)(render(self.template, option_of), where)


class InputError(TrackplanError, ValueError):
    """Bad input: the message names what, where, and what is accepted (see :class:`TrackplanError`)."""


class UnitKindError(InputError):
    """A unit of another kind of quantity than the one needed (a length where a force is needed)."""


class ModelError(TrackplanError):
    """Valid input for which a model cannot give a number (a solver that cannot follow its path).

    Not bad input: the message says what the model could not do and for which inputs; the
    command line reports it like an input problem (exit code 2), a network run as a problem of
    the section concerned.
    """


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
