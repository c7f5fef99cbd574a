"""Target checks and the shared job code: hand-built traces and the engine against outside references."""
