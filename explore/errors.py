"""Errors a user can fix, and the exit codes of the command line."""
from __future__ import annotations

EXIT_OK, EXIT_FAILURE, EXIT_BAD_INPUT, EXIT_INTERRUPTED = 0, 1, 2, 130


class InputError(Exception):
    """Bad input: the message is the whole story, shown on one line each.

    The command line prints each line as ``hopscape: error: ...`` and exits
    with :data:`EXIT_BAD_INPUT` (2), never with a traceback.

    Parameters
    ----------
    messages : str or iterable of str
        One or more lines, each of the form
        ``[file:line:col: ]field: what is wrong (allowed ..., got ...)``.

    Attributes
    ----------
    messages : list of str
        The lines, in the order given.
    """

    def __init__(self, messages):
        if isinstance(messages, str):
            messages = [messages]
        self.messages = list(messages)
        super().__init__("\n".join(self.messages))


#: Longest value shown in a message [characters]: a 98 KB value must not
#: become a 98 KB error line.
SHOWN_CHARACTERS = 60


def shown(value):
    """A value as a message shows it: its repr, cut to :data:`SHOWN_CHARACTERS`."""
    text = repr(value)
    if len(text) <= SHOWN_CHARACTERS:
        return text
    return f"{text[:SHOWN_CHARACTERS - 10]}... ({len(text):,} characters)"
