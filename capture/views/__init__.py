"""What reads results for people, one module per view.

- ``gaplist``: the gap list for lab managers (``masstrail gaps``), CSV included;
- ``audit``: the teaching-lab audit (``masstrail audit``);
- ``report``: the lab's HTML report (``masstrail report``), with ``charts``;
- ``routes``: cumulative figures of multi-step routes (``masstrail route``);
- ``export``: the store's tables as CSV or JSON (``masstrail export``);
- ``filters``: which entries and gaps a view covers.

Views read results (computed by :mod:`capture.scan`, or the sidecars and the store); they
never change an entry.
"""
