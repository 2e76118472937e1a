"""Tests of the posterior layer: priors, log-posterior, sampling runs, files, diagnostics."""
