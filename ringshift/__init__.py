"""ringshift: ring-current ¹H NMR shifts of π-conjugated rings.

Public API (kept small): :func:`load_structure`, :func:`predict`, :func:`compare`.
"""

__version__ = "0.1.0"
