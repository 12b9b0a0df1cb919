"""The ward in a browser (``vascplan serve``): Starlette pages over :mod:`vascplan.app`.

Imported only by ``vascplan serve`` and the tests: the command line never loads it.
"""
