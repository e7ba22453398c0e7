"""One hierarchy of errors, each carrying a sentence for a person.

Library code raises these; only the command line turns them into exit codes.
"""

from __future__ import annotations


class BriefError(Exception):
    """Base class: ``message`` says what is wrong, ``hint`` what to do about it."""

    exit_code = 1

    def __init__(self, message: str, hint: str | None = None) -> None:
        super().__init__(message)
        self.message = message
        self.hint = hint

    def __str__(self) -> str:
        return self.message if not self.hint else f"{self.message} {self.hint}"


class ConfigError(BriefError):
    """The YAML config is missing, unreadable or says something invalid."""

    exit_code = 2


class DataError(BriefError):
    """The data file cannot be opened or does not fit the config."""

    exit_code = 3


class RenderError(BriefError):
    """The brief could not be written."""

    exit_code = 4


class FigureReviewError(RenderError):
    """A figure broke a review rule (font size, contrast, colour vision, grayscale).

    Its own exit code, so a scheduler can tell a theme to fix from a PDF engine that
    failed; nothing is written and the previous brief stays.
    """

    exit_code = 8


class EngineError(BriefError):
    """The engine stopped mid-run: its disk filled, its data file went, or its server left.

    Not the config's fault and not a bug: a scheduler may retry once the engine's
    machine is fixed. Nothing is published and the previous brief stays.
    """

    exit_code = 9


class OutputBusyError(BriefError):
    """Another run holds the output folder's lock."""

    exit_code = 5


class DeliveryError(BriefError):
    """The brief was published but the email could not be delivered."""

    exit_code = 6


class HeldError(BriefError):
    """The publish gate held the brief: built and kept, but not published or mailed to readers."""

    exit_code = 7
