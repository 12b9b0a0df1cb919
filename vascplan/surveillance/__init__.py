"""Limb-perfusion surveillance: unit files, risk, check schedules and the unit rota."""
