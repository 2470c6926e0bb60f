"""Example evolvers outside Python, run through the JSON-lines protocol (README.md here).

``es.js`` (Node.js) and ``es.c`` (C99) are the same (1 + lambda) evolution strategy on a
fixed network. ``es-node`` is the JavaScript one registered by name; the C one runs as
``process:PATH`` once compiled (the command is in README.md and at the top of ``es.c``).
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

from neuroyard.core.process_evolver import ProcessEvolver

HERE = Path(__file__).parent
ES_JS = HERE / "es.js"
ES_C = HERE / "es.c"


def es_node(**options: Any) -> ProcessEvolver:
    """The (1 + lambda) evolution strategy of ``es.js``, run by ``node`` (Node.js 20 or newer
    on PATH). Options: ``lambda``, ``sigma``, ``hidden``, ``init_range``, ``timing`` (the
    child's own; it lists them in its settings) and ``reply_timeout`` (the harness's)."""
    return ProcessEvolver(("node", str(ES_JS)), **options)
