"""Study commands (run, check, new); registered on the main parser."""
from __future__ import annotations

HANDLERS = {}


def register(sub):
    """Add the study sub-commands to the ``hopscape`` parser."""
