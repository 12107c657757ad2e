"""Layer 5, presentation: tables, JSON, Markdown and figures of results.

Nothing here computes physics; sentences for people are built only here.
"""
