"""Results show themselves in a notebook: ``_repr_html_`` gives the headline table (escaped,
no more digits than u supports) and ``to_frame()`` the points, for a reduction, a temperature
study, a calibration batch and many series.

The readings are synthetic (``tests/synthetic.py``: γ± of the extended Debye–Hückel term with
Bå = 1.5, E° = 0.2224 V) or the bundled demo files; they test the display's mechanics and are
not check values. Nothing here compares with a published value: every expectation is a
property of the display (rows, escaping, rounding, agreement with the result it shows).
"""

from __future__ import annotations

import html
from html.parser import HTMLParser
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from synthetic import emf_from_gamma

from activolt.data.runs import read_run, runs_from_frame
from activolt.physics.water import debye_hueckel_constants
from activolt.procedures.calibration import calibrate
from activolt.procedures.dilution import reduce_run
from activolt.procedures.display import html_table, rounded_uncertainty, value_with_uncertainty
from activolt.procedures.many import reduce_many
from activolt.procedures.temperature import study_temperatures

SAMPLE = Path(__file__).resolve().parents[1] / "src" / "activolt" / "sample_data"
MOLALITY = np.array([0.001, 0.002, 0.005, 0.01, 0.02, 0.05, 0.1])
#: Synthetic E° [V] (an input, not a check value).
E0_V = 0.2224
U_EMF_V = 2e-5
HOSTILE = '<script>alert("x")</script>'


class _Cells(HTMLParser):
    """The text of every table cell and list item, and every tag seen."""

    def __init__(self) -> None:
        super().__init__()
        self.tags: list[str] = []
        self.cells: list[str] = []
        self._open = False

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        self.tags.append(tag)
        if tag in ("td", "th", "li", "caption"):
            self._open = True
            self.cells.append("")

    def handle_endtag(self, tag: str) -> None:
        if tag in ("td", "th", "li", "caption"):
            self._open = False

    def handle_data(self, data: str) -> None:
        if self._open:
            self.cells[-1] += data


def parse(markup: str) -> _Cells:
    parser = _Cells()
    parser.feed(markup)
    return parser


def _emf(molality: np.ndarray, e0_V: float = E0_V, temperature_K: float = 298.15
         ) -> np.ndarray:
    a = debye_hueckel_constants(np.full(molality.shape, temperature_K)).agamma
    gamma = np.exp(-a * np.sqrt(molality) / (1.0 + 1.5 * np.sqrt(molality)))
    return emf_from_gamma(molality, gamma, e0_V, temperature_K=temperature_K)


def _frame(series: str = "", name: str = "run.csv") -> pd.DataFrame:
    rng = np.random.default_rng(3)
    return pd.DataFrame({"molality_mol_kg": MOLALITY,
                         "emf_V": _emf(MOLALITY) + rng.normal(0.0, U_EMF_V, MOLALITY.size),
                         "u_emf_V": U_EMF_V, "series": series, "note": HOSTILE})


METADATA = {"electrolyte": "HCl", "electrons": 1, "temperature_C": 25.0}


def test_value_with_uncertainty_keeps_two_digits_of_u() -> None:
    # Rounding rule of the GUM (JCGM 100:2008, 7.2.6): u to two significant digits, the value
    # to the same decimal place.
    assert value_with_uncertainty(0.22218934, 2.345e-5, scale=1e3) == "222.189 ± 0.023"
    assert value_with_uncertainty(-40015.78, 24.86, scale=1e-3) == "-40.016 ± 0.025"
    assert value_with_uncertainty(4.3345, float("nan")) == "4.335 (held)"
    assert value_with_uncertainty(float("nan"), 0.1) == "—"
    assert rounded_uncertainty(4.58e-5, scale=1e3) == "0.046"


def test_html_table_escapes_every_text() -> None:
    markup = html_table(HOSTILE, [HOSTILE], [[HOSTILE, 1]], warnings=[HOSTILE], notes=["a & b"])
    parsed = parse(markup)
    assert "script" not in parsed.tags
    assert parsed.cells.count(HOSTILE) == 4
    assert "a & b" in parsed.cells
    assert html.escape(HOSTILE) in markup


def test_reduction_headline_matches_the_result() -> None:
    (run,) = runs_from_frame(_frame(), METADATA, name=f"{HOSTILE}.csv".replace("/", "_"))
    reduction = reduce_run(run)
    markup = reduction._repr_html_()
    parsed = parse(markup)
    assert "script" not in parsed.tags
    cells = dict(zip(parsed.cells[3::2], parsed.cells[4::2], strict=False))
    e0 = reduction.standard_potential
    key = next(k for k in cells if k.startswith("E° / mV"))
    value_text, u_text = cells[key].split(" ± ")
    places = len(u_text.split(".")[1])
    assert len(value_text.split(".")[1]) == places  # the value to the place of u
    assert len(u_text.replace(".", "").lstrip("0")) == 2  # u to two significant digits
    assert abs(float(value_text) - e0.nominal_value * 1e3) <= 0.5 * 10.0 ** -places
    assert float(u_text) == pytest.approx(e0.std_dev * 1e3, rel=0.05)
    stats = reduction.statistics
    assert cells[f"χ²/ν (ν = {stats.dof})"] == f"{stats.reduced_chi2:.3g}"
    assert cells["readings used"] == f"{stats.n_points} of {len(reduction.points)}"
    assert cells["model"] == reduction.model.title
    for warning in reduction.warnings:
        assert warning in parsed.cells


def test_reduction_to_frame_is_a_copy_of_the_points() -> None:
    reduction = reduce_run(read_run(SAMPLE / "kestrel_hcl_25C.csv"))
    frame = reduction.to_frame()
    assert len(frame) == 16 and frame["flag"].notna().sum() == 1
    frame.loc[0, "gamma_pm"] = -1.0
    assert reduction.points.loc[0, "gamma_pm"] > 0


@pytest.fixture(scope="module")
def study():
    rng = np.random.default_rng(11)
    rows = []
    for t_C, e0 in ((15.0, 0.2286), (25.0, 0.2224), (35.0, 0.2157), (45.0, 0.2084)):
        emf = _emf(MOLALITY, e0, t_C + 273.15) + rng.normal(0.0, U_EMF_V, MOLALITY.size)
        rows += [{"molality_mol_kg": m, "emf_V": e, "u_emf_V": U_EMF_V, "temperature_C": t_C}
                 for m, e in zip(MOLALITY, emf, strict=True)]
    (run,) = runs_from_frame(pd.DataFrame(rows), {"electrolyte": "HCl", "electrons": 1},
                             name="study.csv")
    return study_temperatures(run, cross_check=False)


def test_study_headline_and_points(study) -> None:
    parsed = parse(study._repr_html_())
    cells = dict(zip(parsed.cells[3::2], parsed.cells[4::2], strict=False))
    ref = study.reference
    shown = cells["ΔH° / kJ mol⁻¹ (k = 1)"]
    value, u = (float(x) for x in shown.split(" ± "))
    assert u == pytest.approx(ref.delta_H_J_mol.uncertainty * 1e-3, rel=0.05)
    assert value == pytest.approx(ref.delta_H_J_mol.value * 1e-3, abs=u / 10)
    assert sum(k.startswith("isotherm ") for k in cells) == len(study.isotherms) == 4
    frame = study.to_frame()
    assert len(frame) == sum(len(i.reduction.points) for i in study.isotherms)
    assert sorted(frame["isotherm_temperature_K"].unique()) == pytest.approx(
        [i.setpoint_K for i in study.isotherms])
    assert (frame.groupby("isotherm")["temperature_K"].mean()
            - frame.groupby("isotherm")["isotherm_temperature_K"].first()).abs().max() < 0.5


def test_calibration_headline_escapes_electrode_names(tmp_path: Path) -> None:
    table = (SAMPLE / "kestrel_agcl_batch.csv").read_text(encoding="utf-8")
    table = table.replace("KB-AgCl-26", f"KB{HOSTILE}26")
    (tmp_path / "batch.csv").write_text(table, encoding="utf-8")
    (tmp_path / "batch.toml").write_text(
        (SAMPLE / "kestrel_agcl_batch.toml").read_text(encoding="utf-8"), encoding="utf-8")
    batch = calibrate(tmp_path / "batch.csv")
    parsed = parse(batch._repr_html_())
    assert "script" not in parsed.tags
    rows = [parsed.cells[i:i + 6] for i in range(7, 7 + 6 * len(batch.electrodes), 6)]
    assert [r[0] for r in rows] == [e.electrode for e in batch.electrodes]
    assert [r[5].split(",")[0] for r in rows] == [e.verdict for e in batch.electrodes]
    failed = next(r for r in rows if r[0] == f"KB{HOSTILE}26")
    assert failed[5].startswith("fail")
    frame = batch.to_frame()
    assert frame["verdict"].tolist() == [e.verdict for e in batch.electrodes]
    assert frame["expanded_uncertainty_V"].to_numpy() == pytest.approx(
        frame["coverage_factor"].to_numpy() * frame["u_standard_potential_V"].to_numpy())


def test_many_headline_names_a_refused_series() -> None:
    single = _frame("=C").iloc[[3, 3, 3]]  # one molality only: no extrapolation possible
    frame = pd.concat([_frame("A"), _frame("B"), single], ignore_index=True)
    result = reduce_many(frame, metadata=METADATA)
    parsed = parse(result._repr_html_())
    assert parsed.cells[0] == "2 of 3 series reduced (model: hueckel)"
    rows = [parsed.cells[i:i + 7] for i in range(8, 8 + 7 * 3, 7)]
    assert [r[1] for r in rows] == ["A", "B", "=C"]
    assert rows[2][6].startswith("refused: ")
    points = result.to_frame()
    assert set(points["series"]) == {"A", "B"}
    assert len(points) == 2 * MOLALITY.size
    assert (points["file"] == "DataFrame").all()


def test_many_repr_is_one_line() -> None:
    result = reduce_many(_frame("A"), metadata=METADATA)
    assert repr(result) == "<ManyReductions: 1 of 1 series reduced, model hueckel>"


def test_ph_headline_and_readings(tmp_path: Path) -> None:
    from activolt.procedures.ph import primary_ph

    for name in ("kestrel_phosphate_ph", "kestrel_agcl_batch"):
        for suffix in (".csv", ".toml"):
            (tmp_path / f"{name}{suffix}").write_bytes((SAMPLE / f"{name}{suffix}").read_bytes())
    result = primary_ph(tmp_path / "kestrel_phosphate_ph.csv")
    parsed = parse(result._repr_html_())
    assert "script" not in parsed.tags
    (isotherm,) = result.isotherms
    row = parsed.cells[7:13]
    assert row[1] == value_with_uncertainty(isotherm.ph, isotherm.standard_uncertainty)
    assert row[2].startswith(rounded_uncertainty(isotherm.expanded_uncertainty))
    frame = result.to_frame()
    assert len(frame) == len(isotherm.lines) == int(row[4])
    assert frame["chloride_molality_mol_kg"].to_numpy() == pytest.approx(
        isotherm.chloride_molality_mol_kg)
