"""Exceptions whose message is shown to the user as one line (the CLI never prints a traceback)."""


class NeuroyardError(Exception):
    """Base class of the errors a user can fix; the one-line message says what was wrong
    and where.

    Raised through its subclasses when a network, an evolver, a task, a store or a setting
    given by the user is wrong; the command line prints the message as one line and exits
    with status 2. Anything else that goes wrong is an internal error.

    Example:
        >>> from neuroyard import Network, NeuroyardError
        >>> try:
        ...     Network.from_json('{"nodes": []}', where="my.json")
        ... except NeuroyardError as error:  # catches every error the user can fix
        ...     print(type(error).__name__, "|", error)
        NetworkError | my.json: 'connections' must be a list
    """


class NetworkError(NeuroyardError):
    """Raised when a network or its JSON form breaks a rule of the network format; the
    message starts with where the network came from and names the node or connection.

    Example:
        >>> from neuroyard import Connection, Network, Node
        >>> net = Network((Node(0, "input"), Node(1, "output")), (Connection(1, 0, 1.0),))
        >>> Network.from_json(net.to_json(), where="candidate 3 of generation 7")
        Traceback (most recent call last):
        ...
        neuroyard.core.errors.NetworkError: candidate 3 of generation 7: connection 0 (1 -> 0): target is input node 0; nothing may connect into input or bias nodes
    """


class EvolverError(NeuroyardError):
    """Raised when an evolver cannot be found, loaded or built with the options given.

    Example:
        >>> from neuroyard.core.errors import EvolverError
        >>> from neuroyard.core.evolver_registry import EvolverSpec
        >>> try:
        ...     EvolverSpec("hill-climber", {"sigma": -1}).build()
        ... except EvolverError as error:
        ...     print(error)
        evolver hill-climber: option 'sigma' must be > 0, got -1.0
    """


class TaskError(NeuroyardError):
    """Raised for an unknown or retired task id, or a task setting that is unknown, of the
    wrong type, out of its range or does not fit with the others.

    Example:
        >>> from neuroyard import TaskError, make_task
        >>> try:
        ...     make_task("xor-v2", recurrent_steps=0)
        ... except TaskError as error:
        ...     print(error)
        task xor-v2: setting 'recurrent_steps' must be within 1..1000, got 0
    """


class StoreError(NeuroyardError):
    """Raised when a results store cannot be opened, read or written; the message names the
    file and the reason.

    Example:
        >>> from neuroyard import StoreError, open_store
        >>> try:
        ...     open_store("no/such/store.db")
        ... except StoreError as error:
        ...     print(error)
        results store no/such/store.db: no such file
    """


class SettingError(NeuroyardError, ValueError):
    """Raised for a task setting or an evolver option that is unknown, given twice, of the
    wrong type or out of its range (see :mod:`.options`); a ``ValueError`` too, so an
    evolver's ``__init__`` may let it through as the contract's configuration error.

    Example:
        >>> from neuroyard import Option, OptionTable
        >>> table = OptionTable("evolver demo", [Option("population", 50, low=2)])
        >>> try:
        ...     table.resolve({"population": 1.5})
        ... except ValueError as error:  # a SettingError is a ValueError
        ...     print(type(error).__name__, "|", error)
        SettingError | evolver demo: option 'population' must be a whole number, got 1.5
    """


class ProcessEvolverError(EvolverError):
    """An evolver running as its own process broke the JSON-lines protocol, exited, stalled
    or reported an error (:mod:`.process_evolver`); the message is the reason its run fails."""
