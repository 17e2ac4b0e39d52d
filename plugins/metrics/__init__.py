"""Metrics: the figures of one entry.

- ``mass`` (plugin ``metrics``): E-factor (complete, simple, estimated), PMI, totals;
- ``reaction`` (plugin ``reaction``) with ``equation``: atom economy, yield, RME and
  Andraos' factors, from the entry's equation;
- ``waste`` (plugin ``waste``): each input's waste stream, the streams' totals, solvent
  waste by CHEM21 rank.
"""
