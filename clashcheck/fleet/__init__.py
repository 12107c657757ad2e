"""A fleet over time: batch analysis of every aircraft's recordings, a store, modal drift.

Layer 4.5: imports :mod:`clashcheck.analysis`, :mod:`clashcheck.identify`,
:mod:`clashcheck.inputs` and :mod:`clashcheck.model`; :mod:`clashcheck.report.fleet`
renders its results.

- :mod:`.records`: the small records a recording analysis returns.
- :mod:`.store`: the SQLite store of analyses (schema documented there).
- :mod:`.runner`: runs analyses serially, on local processes or on a Dask cluster.
- :mod:`.pipeline`: manifest → tasks → store → per-aircraft drift and verdicts.
"""

__all__: list[str] = []
