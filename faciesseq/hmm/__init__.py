"""The systems-tract hidden Markov model: engine, emissions, estimator, model files."""
