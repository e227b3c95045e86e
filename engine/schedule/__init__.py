"""Schedules of parallel paths: the finish is the latest path, not the sum of all activities."""
