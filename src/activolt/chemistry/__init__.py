"""Chemistry of the cell: electrolytes, half-reactions, cell diagrams and the electrode
catalogue.
"""
