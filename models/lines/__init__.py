"""Closed-form transmission-line models, vectorized over candidates (a row is a candidate)."""
