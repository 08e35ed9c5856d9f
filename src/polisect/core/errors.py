"""Errors a user can act on.

`InputError` means the user's input (a file, a config, a parameter) is wrong; its
message says what was wrong and what to do. The CLI turns it into exit code 2 with a
one-line message and no traceback. Any other exception is an internal error (exit 1).
"""


class InputError(ValueError):
    """Bad user input; the message names the input and what to fix."""
