"""Resolving materials: what a name stands for, and what one line is.

- ``materials`` (plugin ``materials``): the lab's own materials, then the built-in table;
- ``names`` (plugin ``names``): the ``chemicals`` library's name database, last;
- ``lines`` (plugin ``lines``): the knowledge a line is weighed with (the entry's own
  formula, a solution's solvent), and its stage;
- ``knowledge``: the built-in material data, shared by the resolvers (not a plugin).
"""
