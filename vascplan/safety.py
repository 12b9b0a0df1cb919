"""The clinical caution that every output carries."""

CAUTION = (
    "Decision support only: every figure is an estimate to check against imaging and "
    "the patient; local protocols and licensed clinical judgement decide."
)

REFERENCE_MARK = "*"
"""Marker printed beside a value that is a reference default, not a measurement."""

REFERENCE_VALUES_NOTE = (
    "A value marked * is a reference value, not this patient's measurement. For the iliac, "
    "common femoral and axillary arteries it is the minimal lumen diameter that CT finds in "
    "patients of the age who receive large-bore devices (Chiam P et al., Int J Cardiol "
    "2013;167:1373; Catheter Cardiovasc Interv 2018;91:150); elsewhere a population mean or a "
    "recalled value, each with its source below. Patients vary widely around it (one standard "
    "deviation is about 1.5-1.8 mm at the groin). Measure on CT angiography or duplex the "
    "minimal lumen diameter and calcification of every segment a sheath or device will occupy; "
    "a large-bore device is not judged to fit where the fit rests on a reference value."
)
"""What reference values are and what to measure: said wherever they are listed."""
