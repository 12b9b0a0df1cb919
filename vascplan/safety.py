"""The clinical caution that every output carries."""

CAUTION = (
    "Decision support only: every figure is an estimate to check against imaging and "
    "the patient; local protocols and licensed clinical judgement decide."
)

REFERENCE_MARK = "*"
"""Marker printed beside a value that is a reference default, not a measurement."""
