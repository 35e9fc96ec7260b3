"""Observation kinds: each one small class with its likelihood, expectation and simulation."""
