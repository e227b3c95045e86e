"""Rangefold's desktop window: a thin PySide6 adapter over the engine's Estimate."""
