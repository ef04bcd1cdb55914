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

from faciesseq.markov.analysis import SCHEMA, MarkovReport, analyse, analyse_batches
from faciesseq.markov.contingency import ContingencyResult, TestResult, independence_test
from faciesseq.markov.counts import (
    encode,
    fixed_vector,
    n_step,
    ngram_counts,
    transition_counts,
    transition_probabilities,
)
from faciesseq.markov.homogeneity import HomogeneityResult, homogeneity_test
from faciesseq.markov.order import OrderResult, order_analysis
from faciesseq.markov.screening import Screening, leave_out_irregular, screen_cores

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
