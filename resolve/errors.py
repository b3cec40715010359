"""Exceptions the library raises and the exit codes the command line maps them to.

Library code raises `ResolveError` subclasses with one plain sentence that says what went
wrong and what to do; the CLI prints that sentence on one line and exits with the code below.
"""

from __future__ import annotations

from enum import IntEnum


class ExitCode(IntEnum):
    """Fixed process exit codes (a contract: scripts rely on them)."""

    OK = 0
    DATA_ERROR = 1
    USAGE_ERROR = 2
    INTERRUPTED = 130


class ResolveError(Exception):
    """A data or pipeline problem the user can fix; printed as one line, exit code 1."""

    exit_code = ExitCode.DATA_ERROR


class InputError(ResolveError):
    """An input file cannot be read or lacks what the pipeline needs."""


class MappingError(ResolveError):
    """The column mapping is missing a required role or names an absent column."""


class ProjectError(ResolveError):
    """A project folder is missing, damaged or holds no run yet."""


class DecisionError(ResolveError):
    """A reviewer decision cannot be recorded as asked."""
