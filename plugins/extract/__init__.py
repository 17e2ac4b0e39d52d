"""Extracting materials: what an entry records, each material counted once.

1. ``structured`` (plugin ``structured``): the front matter's and the tables' materials,
   and recovered material;
2. ``text`` (plugin ``text``): amounts in the procedure text, and the product's mention;
3. ``merge`` (plugin ``merge``): the text merged with the structured records.
"""
