"""Pure statistics on make/miss arrays: no files, no database, no dashboard.

Modules: ``sequences`` (tidy attempts to per-session arrays), ``simulate``
(streak models and difficulty sampling, shared by the demo league and the
planner).
"""

from .sequences import PlayerSequences, player_sequences, session_arrays
from .simulate import (
    HiddenStateDraw,
    HiddenStateMoments,
    MarkovDraw,
    MarkovMoments,
    hidden_state_moments,
    make_probability,
    markov_moments,
    simulate_bernoulli,
    simulate_hidden_state,
    simulate_markov,
    simulate_session_lengths,
)

__all__ = [
    "HiddenStateDraw",
    "HiddenStateMoments",
    "MarkovDraw",
    "MarkovMoments",
    "PlayerSequences",
    "hidden_state_moments",
    "make_probability",
    "markov_moments",
    "player_sequences",
    "session_arrays",
    "simulate_bernoulli",
    "simulate_hidden_state",
    "simulate_markov",
    "simulate_session_lengths",
]
