"""Charts of an analysis on a matplotlib Axes: used by the window and the PDF report alike,
so nothing here touches pyplot or Qt."""
