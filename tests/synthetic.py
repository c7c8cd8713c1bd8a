"""Writing runs from known truth, for the tests (not check values themselves)."""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path

import numpy as np

from activolt.chemistry.electrolytes import nernst_factor, parse_electrolyte


def write_run(folder: Path, molality: Sequence[float], emf_V: Sequence[float],
              u_emf_V: float | None = None, electrolyte: str = "HCl", electrons: int = 1,
              temperature_C: float = 25.0, stem: str = "run") -> Path:
    """A run table (volts) and its metadata in ``folder``; returns the table's path."""
    header = "molality_mol_kg,emf_V" + (",u_emf_V" if u_emf_V is not None else "")
    rows = [f"{float(m)!r},{float(e)!r}" + (f",{float(u_emf_V)!r}" if u_emf_V is not None else "")
            for m, e in zip(molality, emf_V, strict=True)]
    table = folder / f"{stem}.csv"
    table.write_text("\n".join([header, *rows]) + "\n", encoding="utf-8")
    (folder / f"{stem}.toml").write_text(
        f'electrolyte = "{electrolyte}"\nelectrons = {electrons}\n'
        f"temperature_C = {temperature_C}\n", encoding="utf-8")
    return table


def emf_from_gamma(molality: np.ndarray, gamma: np.ndarray, e0_V: float,
                   electrolyte: str = "HCl", electrons: int = 1,
                   temperature_K: float = 298.15) -> np.ndarray:
    """E = E° − k ln(m± γ±) for a cell forming the electrolyte [V]."""
    e = parse_electrolyte(electrolyte)
    k = nernst_factor(e, electrons, temperature_K)
    return e0_V - k * np.log(e.mean_molality(molality) * gamma)


def write_moved_sample(sample: Path, folder: Path, electrode_cell: str) -> Path:
    """The run ``sample`` copied into ``folder`` as ``moved.csv`` (with its metadata) with one
    reading moved by +0.8 mV, so that it stands out, and the text ``KB-AgCl-08,`` (the
    electrode's cell and the comma after it) written ``electrode_cell`` instead: text a report,
    a spreadsheet or a page must not take as it is."""
    lines = sample.read_text(encoding="utf-8").splitlines()
    moved = [line.replace("429.811", "430.611").replace("KB-AgCl-08,", electrode_cell)
             for line in lines]
    path = folder / "moved.csv"
    path.write_text("\n".join(moved) + "\n", encoding="utf-8")
    path.with_suffix(".toml").write_bytes(sample.with_suffix(".toml").read_bytes())
    return path
