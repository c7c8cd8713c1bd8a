"""Fitting: the measurement model, the batched least-squares engine and what is built on it."""
