"""The ward: accounts, unit and patient events and the audit trail in the store."""
