"""Many members at once: a plan of inputs, workers that measure them, their per-item records, and the
inventory and index page that gather the results."""

from .inventory import INVENTORY_KEYS, rebuild_inventory
from .plan import (BatchItem, MANIFEST_COLUMNS, PHOTO_OPTIONS, PhotoOption, plan_batch, read_plan, REPORT_CHOICES,
                   safe_name)
from .records import to_review
from .run import BatchProgress, BatchSummary, rerun, run_batch

__all__ = ["PhotoOption", "PHOTO_OPTIONS", "MANIFEST_COLUMNS", "REPORT_CHOICES", "INVENTORY_KEYS",
           "BatchItem", "BatchProgress", "BatchSummary", "plan_batch", "run_batch", "rebuild_inventory",
           "safe_name", "read_plan", "to_review", "rerun"]
