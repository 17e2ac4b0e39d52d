"""masstrail's built-in plugins, installed as the package ``masstrail_plugins``.

One folder per stage of an entry's run, in the order the run reaches them (each plugin is
registered by its entry-point name through the ``masstrail`` group, as a lab's own is; see
``capture.plugin_manager.DEFAULT_PLUGINS``):

=========  ==========================================  =====================================
folder     plugins                                     hooks
=========  ==========================================  =====================================
read       readers                                     entry suffixes, read entry
extract    structured, text, merge                     extract amounts, merge materials
resolve    materials, names, lines                     resolve material, line material,
                                                       material stage
balance    balance                                     read balance log, place readings
weigh      masses, limiting, product                   assign mass, choose limiting, product
gaps       gaps                                        check records, find gaps, grade gaps
metrics    reaction, metrics, waste                    reaction figures, waste stream,
                                                       compute metrics
write      sidecar, store, notify                      write result, previous results, flush,
                                                       scan done, remove result, notify
=========  ==========================================  =====================================

``prose`` (sentences, names and the operation vocabulary) and ``resolve/knowledge`` (the
material data) are public modules the plugins share; ``data/`` holds the data files.
"""
