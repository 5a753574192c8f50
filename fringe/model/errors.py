"""The one exception family of fringe.

::

    FringeError
    ├── ScenarioError (also ValueError)   bad scenario, plan or command input
    │   └── ArgumentError                  a function argument (a command option) is unusable
    ├── FringeInputError (also ValueError) bad arguments to a library function
    └── FringeIOError (also OSError)       a file that cannot be read or written

    FringeWarning (a UserWarning)          input that is accepted but probably wrong;
                                           the CLI prints it as ``fringe: warning: …``

Every message has one form: ``<where>: `<key path>` must be <expectation>; got <value>``.
"""

from __future__ import annotations

__all__ = ["FringeError", "ScenarioError", "ArgumentError", "FringeInputError", "FringeIOError",
           "FringeWarning", "must_be"]


class FringeError(Exception):
    """Base class of every error fringe raises on purpose."""


class ScenarioError(FringeError, ValueError):
    """A scenario (or a plan file it references) is malformed or inconsistent.

    Parameters
    ----------
    message : str
        The full message, already naming the key path and what was expected.
    file : str, optional
        The file the problem was found in; prefixed to the message.
    """

    def __init__(self, message: str, file: str | None = None) -> None:
        self.file = file
        self.detail = message
        super().__init__(f"{file}: {message}" if file else message)


class ArgumentError(ScenarioError):
    """An argument of a library function cannot be used (a region, an angle list, …).

    The message names the Python parameter (```region``` …), never a command-line flag:
    a front end that exposes the parameter under another name (the CLI's ``--region``)
    renames it with :meth:`renamed`.

    Parameters
    ----------
    message : str
        The full message, of the form produced by :func:`must_be` for ``argument``.
    argument : str
        The parameter's name, as it appears between backticks in ``message``.
    file : str, optional
        The scenario file the argument was checked against, if any.
    """

    def __init__(self, message: str, argument: str, file: str | None = None) -> None:
        self.argument = argument
        super().__init__(message, file)

    def renamed(self, names: dict[str, str]) -> str:
        """The message with the parameter called by its name in ``names`` (if listed).

        >>> e = ArgumentError(must_be("angles_deg", "at least one angle", ""), "angles_deg")
        >>> e.renamed({"angles_deg": "--angles"})
        "`--angles` must be at least one angle; got ''"
        """
        new = names.get(self.argument)
        if new is None:
            return str(self)
        return str(self).replace(f"`{self.argument}`", f"`{new}`", 1)


class FringeInputError(FringeError, ValueError):
    """A library function got an argument it cannot work with."""


class FringeIOError(FringeError, OSError):
    """A file could not be read or written."""


class FringeWarning(UserWarning):
    """Input accepted but probably wrong (e.g. an implausible field); says the number."""


#: Longest ``got`` value quoted in a message, in characters (longer ones are cut).
_MAX_GOT_CHARS = 80


def must_be(key_path: str, expectation: str, got: object) -> str:
    """Format the one message form used throughout fringe.

    Very long values (a pasted array, a huge number) are cut to ``_MAX_GOT_CHARS``.

    >>> must_be("magnet[0].coil[1].turns", "a positive number", -3)
    '`magnet[0].coil[1].turns` must be a positive number; got -3'
    """
    if type(got).__module__ == "numpy" and hasattr(got, "item") and getattr(got, "ndim", 1) == 0:
        got = got.item()  # np.float64(5.6) → 5.6: users never typed numpy
    try:
        text = repr(got)
    except (RecursionError, ValueError):  # deeply nested data; ints beyond str() limit
        text = f"<{type(got).__name__}>"
    if len(text) > _MAX_GOT_CHARS:
        text = text[:_MAX_GOT_CHARS - 1] + "…"
    return f"`{key_path}` must be {expectation}; got {text}"
