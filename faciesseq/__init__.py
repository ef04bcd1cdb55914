"""faciesseq: facies successions of described cores.

Transition statistics and Markov-order / cyclicity tests, a hidden Markov model
whose hidden states are systems tracts, surface probability curves, and a
reproducible statistical appendix.

The public API is imported lazily, so ``import faciesseq`` is cheap.
"""

from __future__ import annotations

import importlib
from typing import Any

from faciesseq._version import __version__

# name -> module that defines it: the entry points the README and docs/ call
_API = {
    # reading and writing core databases
    "Core": "faciesseq.core",
    "CoreSet": "faciesseq.core",
    "Succession": "faciesseq.core",
    "read_cores": "faciesseq.io",
    "stream_cores": "faciesseq.io",
    "write_cores": "faciesseq.io",
    "summarise": "faciesseq.io",
    # facies schemes and tract models
    "FaciesScheme": "faciesseq.scheme",
    "TractModel": "faciesseq.scheme",
    "load_scheme": "faciesseq.scheme",
    "load_tract_model": "faciesseq.scheme",
    "default_tract_model": "faciesseq.scheme",
    # errors
    "FaciesseqError": "faciesseq.errors",
    "InputError": "faciesseq.errors",
    "ConfigError": "faciesseq.errors",
    # Markov statistics
    "analyse": "faciesseq.markov",
    "suggest_ranks": "faciesseq.markov.seriation",
    # the systems-tract hidden Markov model
    "TractHMM": "faciesseq.hmm.model",
    "load_model": "faciesseq.hmm.modelfile",
    "save_model": "faciesseq.hmm.modelfile",
    "cross_validate": "faciesseq.validation",
    # figures, correlation, simulation, the appendix
    "strip_log": "faciesseq.report.striplog",
    "correlate": "faciesseq.correlation",
    "correlate_interpretation": "faciesseq.correlation",
    "read_wells": "faciesseq.correlation",
    "draw_section": "faciesseq.report.section",
    "simulate": "faciesseq.simulate",
    "run_appendix": "faciesseq.pipeline",
    "build_appendix": "faciesseq.report.appendix",
    "write_appendix": "faciesseq.report.appendix",
}

__all__ = ["__version__", *_API]


def __getattr__(name: str) -> Any:
    module = _API.get(name)
    if module is None:
        raise AttributeError(f"module 'faciesseq' has no attribute {name!r}")
    return getattr(importlib.import_module(module), name)


def __dir__() -> list[str]:
    return sorted(__all__)
