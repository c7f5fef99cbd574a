"""The test suite: one package per part of the product; `python -m pytest` runs it all (see README)."""
