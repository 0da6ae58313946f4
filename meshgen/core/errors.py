"""The project's own exception types.

Library code raises these; only the command line turns them into exit codes
(``CaseError`` and ``InputError`` -> 2, anything else -> 1).
"""

from __future__ import annotations


class MeshgenError(Exception):
    """Base class of every error meshgen raises on purpose."""


class InputError(MeshgenError):
    """Bad input from the user: a file, an argument, a value.

    ``problems`` holds one line per problem, each naming the field or argument,
    the value given and what would be valid.
    """

    def __init__(self, problems: str | list[str]):
        self.problems = [problems] if isinstance(problems, str) else list(problems)
        super().__init__("\n".join(self.problems))


class CaseError(InputError):
    """A case (file, defaults and ``--set`` overrides) that fails validation."""


class MeshError(MeshgenError):
    """A mesh that failed verification: counts, orientation, tags or spacing."""


class WriteError(MeshgenError):
    """A mesh file that could not be written."""


class ReadError(InputError):
    """A mesh file that could not be read or holds no boundary groups."""
