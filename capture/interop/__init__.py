"""Exchange with open standards: the Open Reaction Database (:mod:`capture.interop.ord_out`,
:mod:`capture.interop.ord_in`)."""
