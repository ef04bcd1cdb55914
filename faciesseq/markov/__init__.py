"""Transition statistics, Markov-order and cyclicity tests of facies successions.

Successions are read base to top (older to younger); an upward transition is
from a bed to the bed above it. One module per concept:

- :mod:`~faciesseq.markov.counts` — count matrices, probabilities, fixed vector, n-step;
- :mod:`~faciesseq.markov.contingency` — (quasi-)independence tests and cell diagnostics;
- :mod:`~faciesseq.markov.order` — order tests, AIC and BIC;
- :mod:`~faciesseq.markov.surrogates` — surrogate successions for exact tests;
- :mod:`~faciesseq.markov.homogeneity` — one chain for all cores?;
- :mod:`~faciesseq.markov.cyclicity` — entropies, cycle type, preferred path;
- :mod:`~faciesseq.markov.screening` — irregular cores left out;
- :mod:`~faciesseq.markov.analysis` — :func:`analyse` bundles it all in a :class:`MarkovReport`.
"""

from importlib import import_module

#: Where each name lives: a submodule is imported when one of its names is first used,
#: so that reading the screening of irregular cores does not import the statistics.
_HOMES = {
    "analysis": ("SCHEMA", "MarkovReport", "analyse", "analyse_batches"),
    "contingency": ("ContingencyResult", "TestResult", "independence_test"),
    "counts": (
        "encode",
        "fixed_vector",
        "n_step",
        "ngram_counts",
        "transition_counts",
        "transition_probabilities",
    ),
    "homogeneity": ("HomogeneityResult", "homogeneity_test"),
    "order": ("OrderResult", "order_analysis"),
    "screening": ("Screening", "leave_out_irregular", "screen_cores"),
}
_HOME_OF = {name: module for module, names in _HOMES.items() for name in names}


def __getattr__(name: str):
    if name not in _HOME_OF:
        raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
    value = getattr(import_module(f"{__name__}.{_HOME_OF[name]}"), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted([*globals(), *_HOME_OF])


__all__ = [
    "SCHEMA",
    "ContingencyResult",
    "HomogeneityResult",
    "MarkovReport",
    "OrderResult",
    "Screening",
    "TestResult",
    "analyse",
    "analyse_batches",
    "encode",
    "fixed_vector",
    "homogeneity_test",
    "independence_test",
    "leave_out_irregular",
    "n_step",
    "ngram_counts",
    "order_analysis",
    "screen_cores",
    "transition_counts",
    "transition_probabilities",
]
