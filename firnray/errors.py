"""Warning and error classes of the project (a leaf module: it imports nothing from firnray)."""


class FirnrayWarning(UserWarning):
    """Warnings emitted by firnray (for example a ray whose root did not converge)."""


class InputFileError(ValueError):
    """An input file could not be read: the message names the file and where in it."""


class ProfileFileError(InputFileError):
    """A profile file could not be read: the message names the file and the key."""
