"""The error of the scenario store and its helpers."""


class StoreError(Exception):
    """A store operation failed; the message says why in plain words."""
