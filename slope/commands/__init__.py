"""The application layer: one module per ``slipfield`` command (``run``, ``simulate`` with
``sweep``); results become files only here."""
