"""Numerical engine of the tract model: forward-backward, Viterbi, clamping.

The engine works on a *log-emission array*: one row per observation (a bed
or a grid cell), one column per hidden state, holding ``log p(obs_t | state
k)``; the rows of all sequences are concatenated and ``lengths`` says where
each sequence ends. Whatever emission model the caller uses reduces to such an
array (or a table and the code of every row), so the engine knows nothing of
facies or tracts. Its rooms: :mod:`.recursions` (forward-backward, the
log-likelihood), :mod:`.best_path` (Viterbi), :mod:`.clamping` (labelled rows),
:mod:`.emission_rows` (where a batch's emissions come from), :mod:`.batches`
(sequences packed time-major, one BLAS thread) and :mod:`.checks` (inputs).
"""

from faciesseq.hmm.engine.batches import DEFAULT_BATCH_CELLS, single_thread_blas
from faciesseq.hmm.engine.best_path import DEFAULT_VITERBI_BATCH_CELLS, viterbi
from faciesseq.hmm.engine.clamping import constrained_log_emission
from faciesseq.hmm.engine.emission_rows import CodeIndex
from faciesseq.hmm.engine.recursions import Posteriors, forward_backward, log_likelihood

__all__ = [
    "DEFAULT_BATCH_CELLS",
    "DEFAULT_VITERBI_BATCH_CELLS",
    "CodeIndex",
    "Posteriors",
    "constrained_log_emission",
    "forward_backward",
    "log_likelihood",
    "single_thread_blas",
    "viterbi",
]
