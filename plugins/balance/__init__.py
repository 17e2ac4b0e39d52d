"""Balance logs: the balance is the original record (plugin ``balance``).

Its parts run in this order:

1. ``csv_log`` (``masstrail_read_balance_log``): a balance's CSV export read into readings,
   its layout detected or declared under ``[balance_layout]``; called by the run once per
   file an entry names in ``balance_log``, after the path was checked to lie inside the
   notebook (:func:`capture.safeio.safe_log_path`);
2. ``placing`` (``masstrail_place_readings``): each reading to the material or product its
   label names (weighing by difference, stability, dates), the rest as gaps.
"""

from masstrail_plugins.balance.csv_log import read_csv_export
from masstrail_plugins.balance.placing import place_readings

__all__ = ["place_readings", "read_csv_export"]
