"""The front of soakline, the top layer: the ``soakline`` CLI, the HTTP API, the review pages and the
demo batch. It calls ``workers`` to compute and ``models`` to store and read; nothing imports it."""
