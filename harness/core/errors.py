"""Exceptions whose message is shown to the user as one line (the CLI never prints a traceback)."""


class NeuroyardError(Exception):
    """Base class: something the user can fix; the message says what was wrong and where."""


class NetworkError(NeuroyardError):
    """A network document is malformed or violates the format's rules."""


class EvolverError(NeuroyardError):
    """An evolver could not be found, loaded or configured."""


class TaskError(NeuroyardError):
    """An unknown task id or a bad task setting."""


class StoreError(NeuroyardError):
    """The results store cannot be opened, read or written."""


class SettingError(NeuroyardError, ValueError):
    """A task setting or an evolver option that is unknown, of the wrong type or out of its
    range (see :mod:`.options`); a ``ValueError`` too, so an evolver's ``__init__`` may let
    it through as the contract's configuration error."""


class ProcessEvolverError(EvolverError):
    """An evolver running as its own process broke the JSON-lines protocol, exited, stalled
    or reported an error (:mod:`.process_evolver`); the message is the reason its run fails."""
