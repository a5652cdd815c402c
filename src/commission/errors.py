"""One error type for "the person gave us something wrong".

The CLI prints its message as one line and exits with code 2; nothing else in
the package prints tracebacks for bad input.
"""


class UserError(Exception):
    """Bad input from a person: a typo, a wrong unit, a broken or missing file."""

    exit_code = 2

    def __init__(self, message: str):
        super().__init__(message)
        self.message = message

    def __str__(self) -> str:
        return self.message
