"""Reading entries: bytes of a notebook file → an Entry (plugin ``readers``, in ``entries``)."""
