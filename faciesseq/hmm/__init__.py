"""The systems-tract hidden Markov model: engine, emissions, estimator, model files.

- :mod:`faciesseq.hmm.engine`: forward-backward, Viterbi, two-slice posteriors, clamping;
- :mod:`faciesseq.hmm.states`: tracts expanded into left-to-right sub-state chains;
- :mod:`faciesseq.hmm.graphs`: the trade's strict tract graphs, chosen by ICL;
- :mod:`faciesseq.hmm.encoding`: beds as arrays, with the features derived from ranks;
- :mod:`faciesseq.hmm.emissions`: the emission pieces' contract and the plain pieces;
- :mod:`faciesseq.hmm.rank_pieces`, :mod:`faciesseq.hmm.stacking_piece`: pieces reading
  the ranks and the stacking classifier;
- :mod:`faciesseq.hmm.pieces`: a piece by feature name, or rebuilt from a model file;
- :mod:`faciesseq.hmm.context`: pieces reading the stacking context of cycles;
- :mod:`faciesseq.hmm.identity`: tract names from the one deepening tract;
- :mod:`faciesseq.hmm.calibration`, :mod:`faciesseq.hmm.bootstrap`: checked probabilities;
- :mod:`faciesseq.hmm.model`: the :class:`TractHMM` estimator, fitted by
  :mod:`faciesseq.hmm.em`, decoding with :mod:`faciesseq.hmm.decoding`;
- :mod:`faciesseq.hmm.selection`: BIC across sub-state counts and emission sets;
- :mod:`faciesseq.hmm.modelfile`: versioned JSON model files (never pickle);
- :mod:`faciesseq.hmm.baseline`: the trend rule the model is compared with.

Names are imported lazily, so importing the package is cheap.
"""

from __future__ import annotations

import importlib
from typing import Any

_API = {
    "TractHMM": "faciesseq.hmm.model",
    "ConvergenceMonitor": "faciesseq.hmm.model",
    "select_model": "faciesseq.hmm.selection",
    "save_model": "faciesseq.hmm.modelfile",
    "load_model": "faciesseq.hmm.modelfile",
    "trend_rule": "faciesseq.hmm.baseline",
}

__all__ = list(_API)


def __getattr__(name: str) -> Any:
    module = _API.get(name)
    if module is None:
        raise AttributeError(f"module 'faciesseq.hmm' has no attribute {name!r}")
    return getattr(importlib.import_module(module), name)


def __dir__() -> list[str]:
    return sorted(__all__)
