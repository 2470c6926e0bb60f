"""The library's front door, below the command line: campaigns from Python
(:mod:`.campaigns`), the runs of a store as records and tables (:mod:`.results`), and the
judgements: compare two configurations, write a baseline, check against it
(:mod:`.judging`). ``import neuroyard`` re-exports the public names (``neuroyard.__all__``);
the command line (:mod:`neuroyard.cli`) and the pytest plugin (:mod:`neuroyard.pytest_plugin`)
are thin clients of this layer."""
