"""Physics: pure functions of plain numbers, each with its units and source.

Nothing in this package knows about case files, Pyomo or the workbook.
"""
