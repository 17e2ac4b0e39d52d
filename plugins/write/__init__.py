"""Writing results: the sidecar and card next to the entry, the store, notices.

- ``sidecar`` (plugin ``sidecar``): ``NAME.waste.json`` and ``NAME.waste.md``;
- ``store_writer`` (plugin ``store``): the lab's SQLite store (:mod:`capture.store`);
- ``notify`` (plugin ``notify``): the watcher's notices of new serious gaps.
"""
