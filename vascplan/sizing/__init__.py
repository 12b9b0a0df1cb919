"""Sizing and flow: French sizes, SAR, flow round a device and through a perfusion cannula.

Public API (import from the modules):

- :mod:`vascplan.sizing.french`: ``fr_to_mm``, ``mm_to_fr``, ``device_outer_mm``, ``sar``
- :mod:`vascplan.sizing.flow`: tube and annulus resistances, Reynolds, friction factors
- :mod:`vascplan.sizing.eccentric`: the eccentric annulus solved over the cross-section
- :mod:`vascplan.sizing.limb`: ``limb_flow_with_device``
- :mod:`vascplan.sizing.cannula`: ``cannula_flow`` (``solve_cannula``, the numbers, and
  ``cannula_assumptions``, the wording)
- :mod:`vascplan.sizing.assess`: ``assess_sheath_flow`` (everything the command shows)
"""
