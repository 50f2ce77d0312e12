"""Many members at once: a plan of inputs, workers that measure them, and the inventory and index
page that gather the results."""

from .run import (BatchItem, BatchProgress, BatchSummary, INVENTORY_KEYS, MANIFEST_COLUMNS, PHOTO_OPTIONS,
                  PhotoOption, plan_batch, read_plan, rebuild_inventory, REPORT_CHOICES, rerun, run_batch,
                  safe_name, to_review)

__all__ = ["PhotoOption", "PHOTO_OPTIONS", "MANIFEST_COLUMNS", "REPORT_CHOICES", "INVENTORY_KEYS",
           "BatchItem", "BatchProgress", "BatchSummary", "plan_batch", "run_batch", "rebuild_inventory",
           "safe_name", "read_plan", "to_review", "rerun"]
