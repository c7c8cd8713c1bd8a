"""Procedures as thin chains over the fitting engine: dilution reduction, model choice,
Monte Carlo.
"""
