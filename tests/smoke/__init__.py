"""Smoke test of a plain install (no test extras): a script that .ci/run runs, not a pytest module."""
