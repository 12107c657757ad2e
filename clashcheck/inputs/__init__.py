"""Layer 2, text in: build files, catalogs, modes files, and the one unit parser.

Every physical value that enters as text is checked here, once, and becomes
a plain SI float in a :mod:`clashcheck.model` object.
"""
