"""Estimation: every method (two-level, one-level, least squares, Bayesian MAP,
model averaging), the method registry and the population models."""
