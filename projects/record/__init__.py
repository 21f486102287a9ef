"""The field record's one write path (``writes``), its reads at any revision
(``reads``) and the per-process order used by the write-time check."""
