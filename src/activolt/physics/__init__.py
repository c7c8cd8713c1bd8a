"""Physics of the solvent and the cell: water, Debye–Hückel constants, gas-pressure
corrections, thermodynamic relations.
"""
