"""Weighing readings by the evidence (marginal likelihoods, Bayes factors) and sensitivity runs."""
