"""Output: workbook, JSON and plots, written atomically."""
