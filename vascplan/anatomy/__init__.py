"""The arterial tree: reference anatomy and the patient's annotated graph."""
