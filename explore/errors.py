"""Errors a user can fix, and the exit codes of the command line."""
from __future__ import annotations

EXIT_OK, EXIT_FAILURE, EXIT_BAD_INPUT, EXIT_INTERRUPTED = 0, 1, 2, 130


class InputError(Exception):
    """Bad input: the message is the whole story, shown on one line each.

    ``messages`` holds one or more lines, each of the form
    ``[file:line:col: ]field: what is wrong (allowed ..., got ...)``.
    """

    def __init__(self, messages):
        if isinstance(messages, str):
            messages = [messages]
        self.messages = list(messages)
        super().__init__("\n".join(self.messages))
