"""The error every bad case input raises."""


class CaseError(ValueError):
    """Bad case input; the message names the key, the value and what is allowed."""
