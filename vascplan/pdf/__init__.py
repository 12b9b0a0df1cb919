"""The one page stack every PDF goes through, below the packages that print.

- :mod:`~vascplan.pdf.page`: the shared page template (caution, page N of M, generation
  time, title line), the embedded fonts, atomic writing.
- :mod:`~vascplan.pdf.text`: safe text, so that a string from a user file is printed,
  never read as markup.

reportlab is imported by :mod:`~vascplan.pdf.page`: import it inside the commands that
print, never at start-up.
"""
