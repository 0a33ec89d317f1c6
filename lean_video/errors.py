"""The project's single exception type.

Every error a clinician can cause (bad file, bad parameter, unusable clip) is
raised as :class:`LeanVideoError` with a one-line message that says what went
wrong and what to do. The CLI maps it to that line on stderr and an exit code.
"""


class LeanVideoError(Exception):
    """A user-facing failure with a one-line, actionable message.

    Parameters
    ----------
    message : str
        One sentence: what went wrong and what to do about it.
    exit_code : int, optional
        Process exit code the CLI uses (default 2).
    """

    def __init__(self, message: str, *, exit_code: int = 2) -> None:
        super().__init__(message)
        self.exit_code = exit_code
