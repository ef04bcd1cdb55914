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

# name -> module that defines it
_API = {
    "Core": "faciesseq.core",
    "CoreSet": "faciesseq.core",
    "Succession": "faciesseq.core",
    "FaciesScheme": "faciesseq.scheme",
    "TractModel": "faciesseq.scheme",
    "load_scheme": "faciesseq.scheme",
    "load_tract_model": "faciesseq.scheme",
    "default_tract_model": "faciesseq.scheme",
    "FaciesseqError": "faciesseq.errors",
    "InputError": "faciesseq.errors",
    "ConfigError": "faciesseq.errors",
    "read_cores": "faciesseq.io",
    "TractHMM": "faciesseq.hmm.model",
    "load_model": "faciesseq.hmm.modelfile",
    "save_model": "faciesseq.hmm.modelfile",
    "cross_validate": "faciesseq.validation",
}

__all__ = ["__version__", *_API]


def __getattr__(name: str) -> Any:
    module = _API.get(name)
    if module is None:
        raise AttributeError(f"module 'faciesseq' has no attribute {name!r}")
    return getattr(importlib.import_module(module), name)
