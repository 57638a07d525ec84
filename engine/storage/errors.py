"""The error of the scenario store and its helpers."""


class StoreError(Exception):
    """A store operation failed; the message says why in plain words."""


class StoreDamaged(StoreError):
    """The store file is damaged; it was left as it is (the message says what to do)."""
