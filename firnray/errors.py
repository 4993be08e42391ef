"""Warning class of the project (a leaf module: it imports nothing from firnray)."""


class FirnrayWarning(UserWarning):
    """Warnings emitted by firnray (for example a ray whose root did not converge)."""


class ProfileFileError(ValueError):
    """A profile file could not be read: the message names the file and the key."""
