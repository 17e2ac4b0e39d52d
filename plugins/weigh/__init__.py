"""Weighing: amounts to masses, the limiting reagent, the product.

- ``masses`` (plugin ``masses``): each line's mass, moles and water, with its basis;
- ``limiting`` (plugin ``limiting``): the limiting reagent that equivalents refer to;
- ``product`` (plugin ``product``): the product's mass from the balance, the front matter
  or the text.
"""
