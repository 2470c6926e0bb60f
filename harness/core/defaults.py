"""The defaults a user sees, in one module that imports nothing.

The command line shows them in its help without loading the library (numpy, numba, scipy
take seconds to import); the modules that use them import them from here, so each value
is written once.
"""

from pathlib import Path

# campaigns (neuroyard.api.campaigns.run, neuroyard run)
DEFAULT_EVOLVER = "neat"  # the best reference evolver on the quick suite
QUICK_SUITE = ("xor-v2",)
DEFAULT_RUNS = 10
DEFAULT_SEED = 1
DEFAULT_WORKERS = 1  # worker processes of a campaign
# the largest campaign seed: SQLite's largest INTEGER (2**63 - 1), where the store keeps it
MAX_SEED = 2**63 - 1

# where results go (neuroyard.records.store)
DEFAULT_PATH = Path("results") / "neuroyard.db"

# limits of a supervised run (neuroyard.execution.supervisor)
DEFAULT_TIME_LIMIT = 60.0  # s per evolver call (ours: far above any reference evolver's call)
DEFAULT_MEMORY_LIMIT_MB = 4096  # per run (ours: 20x a NEAT double-pole run)
MAX_MEMORY_LIMIT_MB = 2**30  # the largest limit one may set, 1 PiB (ours: an OS limit fits it)
# s of wall time per run, evaluation included (ours: about 4x the longest reference run, a
# NEAT run on the non-Markov double pole: 64 min)
DEFAULT_RUN_LIMIT = 14_400.0
MAX_BATCH = 10_000  # networks per ask() unless a campaign allows more (a guard rail, ours)

# judging (neuroyard.reports.compare, neuroyard.reports.gate)
COMPARE_ALPHA = 0.05  # significance level of a comparison (common practice)
COMPARE_POWER = 0.8  # power for the runs-needed figure (common practice)
GATE_ALPHA = 0.05  # significance level after Holm's correction (ours: the common choice)
# the smallest change that matters to the regression gate (ours), as fractions: points of
# success rate, and the baseline's median of evaluations, connections and speed
SUCCESS_DROP = 0.10
EVALUATIONS_RISE = 0.20
CONNECTIONS_RISE = 0.20
SPEED_DROP = 0.20

# replaying a network (neuroyard replay)
REPLAY_TASK = "pole2-markov-v1"
REPLAY_STEPS = 2000
