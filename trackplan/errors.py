"""One error hierarchy for input problems.

Every problem with what a person gave (an option, a file, a field) raises
:class:`InputError`. The command line catches it in one place, prints the
message (what is wrong, where, what is accepted) and exits with code 2,
never with a traceback.
"""

from __future__ import annotations


class InputError(ValueError):
    """Bad input: the message names what, where, and what is accepted.

    Parameters
    ----------
    message : str
        What is wrong and what would be accepted.
    where : str, optional
        Where: an option name (``--neutral``), a file with line or field
        (``sections.toml [north-1] rail``).
    """

    def __init__(self, message: str, where: str | None = None):
        self.where = where
        self.bare_message = message
        super().__init__(f"{where}: {message}" if where else message)
