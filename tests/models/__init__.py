"""The batch-file models: units, catalogs, loading, every valid form and every error message."""
