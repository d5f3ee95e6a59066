"""Exceptions raised by framebuckle.

Every error a user can meet names *where* the problem is (file, field, cell
or node) so that the command line can print it without a traceback.
"""

from __future__ import annotations


class FrameBuckleError(Exception):
    """Base class of all errors reported to the user (exit code 2 on the CLI).

    Parameters
    ----------
    message : str
        What is wrong and where: the field, cell (input cell index) or point.
    source : str, optional
        The file the problem is in; the message is prefixed with it.
    """

    exit_code = 2

    def __init__(self, message: str, *, source: str | None = None):
        self.source = source
        super().__init__(f"{source}: {message}" if source else message)


class InputError(FrameBuckleError):
    """The input mesh, its fields or the study file are unusable.

    Parameters
    ----------
    message : str
        What is wrong and where: the field, cell (input cell index) or point.
    source : str, optional
        The file the problem is in; the message is prefixed with it.
    """


class ModelError(FrameBuckleError):
    """The model is valid data but not a usable structure (mechanism, ...).

    Parameters
    ----------
    message : str
        What is wrong and where: the field, cell (input cell index) or point.
    source : str, optional
        The file the problem is in; the message is prefixed with it.
    """


class SolverError(FrameBuckleError):
    """The eigensolution failed or did not pass its own checks.

    Parameters
    ----------
    message : str
        What is wrong and where: the field, cell (input cell index) or point.
    source : str, optional
        The file the problem is in; the message is prefixed with it.
    """


class OutputError(FrameBuckleError):
    """An output could not be written.

    Parameters
    ----------
    message : str
        What is wrong and where: the field, cell (input cell index) or point.
    source : str, optional
        The file the problem is in; the message is prefixed with it.
    """
