"""Before and after: two estimates' results side by side, and what changed between them."""

from engine.comparison.before_after import Comparison, LevelChange, compare
from engine.comparison.item_changes import ItemChange, item_changes

__all__ = ["Comparison", "ItemChange", "LevelChange", "compare", "item_changes"]
