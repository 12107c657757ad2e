"""Layer 4, judgement: clash windows and verdicts, comparisons, searches, suggestions.

Pure functions over :mod:`clashcheck.model` objects that return result
dataclasses; nothing here formats text for people.
"""
