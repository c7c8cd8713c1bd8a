"""The calibration certificate of a batch of reference electrodes: one self-contained HTML page.

The certificate is written from the calibration record (``record_kind = "calibration"``, see
``activolt.io.record``), so that every number it shows is the record's number, formatted once
by :func:`activolt.rounding.format_potential`. It holds what ISO/IEC 17025:2017, clause
7.8.2.1 and 7.8.4.1, asks of a calibration certificate: a title, the laboratory, a unique
identification of the certificate on every page and the page numbering (CSS counters when
printed), the customer, the items calibrated, the dates of calibration and of issue, the
method, the conditions, the results with their expanded uncertainty and coverage factor, the
statement of conformity with its decision rule, the metrological traceability and the
authorisation.

The page is print-friendly (A4 through CSS ``@page``), fetches nothing from the network and
runs no script. Every text that comes from the user (metadata, electrode names, file names) is
written through :func:`text`: control and layout characters escaped, then ``html.escape``.
"""

from __future__ import annotations

import html
import math
from collections.abc import Mapping, Sequence
from typing import Any

from ..rounding import format_potential
from ..safe_text import escape_controls

__all__ = ["NOT_STATED", "certificate_html", "certificate_id", "text"]

#: What the certificate says where the metadata do not give a field.
NOT_STATED = "not stated in the metadata"

_STYLE = """
@page { size: A4; margin: 18mm 16mm 20mm 16mm;
  @top-right { content: "Certificate CERTIFICATE-ID"; }
  @bottom-right { content: "Page " counter(page) " of " counter(pages); } }
body { font-family: "DejaVu Sans", Arial, Helvetica, sans-serif; font-size: 10pt;
  color: #000; background: #fff; margin: 0 auto; max-width: 180mm; line-height: 1.35; }
header { border-bottom: 2px solid #000; margin-bottom: 4mm; }
h1 { font-size: 16pt; margin: 2mm 0; }
h2 { font-size: 11pt; margin: 5mm 0 1.5mm 0; border-bottom: 1px solid #888;
  page-break-after: avoid; break-after: avoid; }
table { border-collapse: collapse; width: 100%; page-break-inside: auto; }
tr { page-break-inside: avoid; break-inside: avoid; }
th, td { border: 1px solid #999; padding: 1mm 1.5mm; text-align: left; vertical-align: top; }
td.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
dl.fields { display: grid; grid-template-columns: 45mm 1fr; gap: 0.8mm 3mm; margin: 0; }
dl.fields dt { font-weight: bold; }
dl.fields dd { margin: 0; }
.fail { font-weight: bold; }
.signature { height: 14mm; border-bottom: 1px solid #000; }
footer { margin-top: 6mm; font-size: 8.5pt; color: #333; border-top: 1px solid #888; }
@media print { a { color: #000; text-decoration: none; } }
"""


def text(value: object) -> str:
    """User text as HTML: control and layout characters escaped, then ``html.escape``.

    Examples
    --------
    >>> text('<script>alert("x")</script>')
    '&lt;script&gt;alert(&quot;x&quot;)&lt;/script&gt;'
    >>> text("a\\u202eb")
    'a\\\\u202eb'
    """
    return html.escape(escape_controls(str(value)), quote=True)


def certificate_id(record_sha256: str, prefix: str = "AV-CAL") -> str:
    """The certificate's identification: ``prefix`` and the first 12 hex digits of the SHA-256
    of the record it is issued from (upper case), so that the certificate names its record.

    Examples
    --------
    >>> certificate_id("0123456789abcdef" * 4)
    'AV-CAL-0123456789AB'
    """
    return f"{prefix}-{record_sha256[:12].upper()}"


def _mV(value_V: float | None, places: int = 4) -> str:
    if value_V is None or not math.isfinite(value_V):
        return "—"
    return f"{value_V * 1e3:+.{places}f}"


def _fields(rows: Sequence[tuple[str, str]]) -> str:
    """A definition list; the values are HTML already."""
    return "<dl class=\"fields\">" + "".join(
        f"<dt>{text(label)}</dt><dd>{value}</dd>" for label, value in rows) + "</dl>"


def _info(record: Mapping[str, Any], key: str) -> str:
    value = (record.get("run_info") or {}).get(key)
    return text(value) if value not in (None, "") else f"<em>{NOT_STATED}</em>"


def _number(value: Any, unit: str, scale: float = 1.0, places: int = 3) -> str:
    if value is None:
        return f"<em>{NOT_STATED}</em>"
    return f"{float(value) * scale:.{places}f} {unit}"


def certificate_html(record: Mapping[str, Any], record_sha256: str,
                     record_name: str | None = None) -> str:
    """The calibration certificate of a batch, as one HTML document.

    Parameters
    ----------
    record : mapping
        The calibration record (``record_kind = "calibration"``): ``run_info`` (lab, operator,
        instrument, date, description, customer, approved_by — those given), ``input``,
        ``created_utc``, ``method``, ``method_description``, ``convention``, ``conditions``,
        ``electrodes``, ``acceptance``, ``batch_statistics``, ``traceability``, ``warnings``,
        ``cautions``.
    record_sha256 : str
        The SHA-256 of the record's JSON text as written; the certificate's identification is
        derived from it.
    record_name : str, optional
        The record's file name, shown beside its hash.

    Returns
    -------
    str
        The HTML text (UTF-8): no script, no network reference.
    """
    ident = certificate_id(record_sha256)
    quantity = "E°" if record.get("method") == "hydrogen" else "Potential"
    info = record.get("run_info") or {}
    acceptance = record.get("acceptance") or {}
    conditions = record.get("conditions") or {}
    electrodes = list(record.get("electrodes") or [])
    created = str(record.get("created_utc", ""))
    issue_date = created[:10] if created else NOT_STATED
    method = record.get("method")
    lab = info.get("lab") or "Calibration laboratory"
    n_fail = sum(1 for e in electrodes if e.get("verdict") == "fail")

    rows = []
    for e in electrodes:
        potential = e.get("standard_potential_V") or {}
        value, shown_u = format_potential(potential.get("value"),
                                          e.get("expanded_uncertainty_V"))
        k = e.get("coverage_factor")
        verdict = str(e.get("verdict", ""))
        rows.append(
            "<tr>"
            f"<td>{text(e.get('electrode', ''))}</td>"
            f"<td class=\"num\" data-quantity=\"standard_potential_V\" "
            f"data-value=\"{_data(potential.get('value'))}\">{value}</td>"
            f"<td class=\"num\" data-quantity=\"expanded_uncertainty_V\" "
            f"data-value=\"{_data(e.get('expanded_uncertainty_V'))}\">{shown_u}</td>"
            f"<td class=\"num\" data-quantity=\"coverage_factor\" "
            f"data-value=\"{_data(k)}\">{'—' if k is None else f'{float(k):.2f}'}</td>"
            f"<td class=\"num\" data-quantity=\"deviation_V\" "
            f"data-value=\"{_data(e.get('deviation_V'))}\">"
            f"{_mV(e.get('deviation_V'))}</td>"
            f"<td class=\"{'fail' if verdict == 'fail' else 'pass'}\" "
            f"data-quantity=\"verdict\">{text(verdict)}</td>"
            "</tr>")
    tolerance = acceptance.get("tolerance_V")
    reference = acceptance.get("reference")
    reference_value = acceptance.get("reference_value_V")
    rule = acceptance.get("decision_rule")
    rule_text = acceptance.get("rule")
    conformity = (
        f"{len(electrodes) - n_fail} of {len(electrodes)} electrodes conform to the "
        f"specification: |deviation| within {_number(tolerance, 'mV', 1e3, 3)} of the "
        f"reference ({text(reference) if reference else NOT_STATED}"
        + (f", {_number(reference_value, 'mV', 1e3, 4)}" if reference_value is not None
           else "") + ")"
        + ("" if not n_fail else f"; {n_fail} {'does' if n_fail == 1 else 'do'} not (marked "
           "<span class=\"fail\">fail</span>)")
        + ".")
    statistics = record.get("batch_statistics") or {}
    stat_rows = "".join(
        f"<tr><td>{text(label)}</td><td class=\"num\">{text(shown)}</td></tr>"
        for label, shown in (_statistic(key, value) for key, value in statistics.items()))
    traceability = record.get("traceability")
    trace_items = ([traceability] if isinstance(traceability, str)
                   else list(traceability or []))
    warnings = list(record.get("warnings") or [])
    cautions = list(record.get("cautions") or [])
    source = record.get("input") or {}

    body = f"""<header>
<p class="lab">{text(lab)}</p>
<h1>Calibration certificate — reference electrodes</h1>
<p>Certificate <strong id="certificate-id">{text(ident)}</strong></p>
</header>
<section id="identification"><h2>1. Identification</h2>
{_fields([
    ("Certificate", f"{text(ident)} (issued from record SHA-256 {text(record_sha256)}"
                    + (f", {text(record_name)}" if record_name else "") + ")"),
    ("Laboratory", _info(record, "lab")),
    ("Customer", _info(record, "customer")),
    ("Items calibrated", f"{len(electrodes)} reference electrodes: "
                         + ", ".join(text(e.get('electrode', '')) for e in electrodes)),
    ("Batch", _info(record, "description")),
    ("Batch data file", f"{text(_file_name(source.get('file', NOT_STATED)))} (SHA-256 "
                        f"{text(source.get('sha256', ''))})"),
])}
</section>
<section id="dates"><h2>2. Dates</h2>
{_fields([
    ("Date of calibration", _info(record, "date")),
    ("Date of issue", text(issue_date)),
])}
</section>
<section id="method"><h2>3. Method</h2>
{_fields([
    ("Method", text(method) if method else f"<em>{NOT_STATED}</em>"),
    ("Description", text(record.get("method_description") or NOT_STATED)),
    ("Convention", text(record.get("convention") or NOT_STATED)),
    ("Instrument", _info(record, "instrument")),
])}
</section>
<section id="conditions"><h2>4. Conditions</h2>
{_fields([
    ("Temperature", _number(conditions.get("temperature_C"), "°C", 1.0, 2)
     + (f" (u = {float(conditions['u_temperature_K']):.3f} K)"
        if conditions.get("u_temperature_K") else "")),
    ("Barometric pressure", _number(conditions.get("pressure_kPa"), "kPa", 1.0, 2)),
    ("Standard pressure of E°", _number(conditions.get("standard_pressure_kPa"), "kPa", 1.0,
                                        3)),
])}
</section>
<section id="results"><h2>5. Results</h2>
<p>Potential of each electrode with its expanded uncertainty U = k·u, where k is the coverage
factor for a coverage probability of about 95 % (Student's t at the effective degrees of
freedom, JCGM 100:2008, G.4); deviation from the reference of the acceptance.</p>
<table id="results-table"><thead><tr><th>Electrode</th><th>{quantity} / mV</th>
<th>U / mV</th><th>k</th><th>Deviation / mV</th><th>Verdict</th></tr></thead>
<tbody>
{chr(10).join(rows)}
</tbody></table>
{('<h3>Batch statistics</h3><table id="statistics">' + stat_rows + '</table>')
 if stat_rows else ''}
</section>
<section id="conformity"><h2>6. Statement of conformity</h2>
<p>{conformity}</p>
{_fields([
    ("Tolerance", _number(tolerance, "mV", 1e3, 3)),
    ("Reference", text(reference) if reference else f"<em>{NOT_STATED}</em>"),
    ("Decision rule", text(rule) if rule else f"<em>{NOT_STATED}</em>"),
    ("Rule applied", text(rule_text) if rule_text else f"<em>{NOT_STATED}</em>"),
])}
</section>
<section id="traceability"><h2>7. Metrological traceability</h2>
{'<ul>' + ''.join(f'<li>{text(t)}</li>' for t in trace_items) + '</ul>' if trace_items
 else f'<p><em>{NOT_STATED}</em></p>'}
</section>
{('<section id="remarks"><h2>8. Remarks</h2><ul>'
  + ''.join(f'<li>{text(w)}</li>' for w in [*warnings, *cautions]) + '</ul></section>')
 if warnings or cautions else ''}
<section id="authorisation"><h2>{9 if warnings or cautions else 8}. Authorisation</h2>
{_fields([
    ("Calibrated by", _info(record, "operator")),
    ("Approved by", _info(record, "approved_by")),
    ("Signature", '<div class="signature"></div>'),
])}
</section>
<footer><p>Certificate {text(ident)}. This certificate shall not be reproduced except in full
without the written approval of the laboratory. The results relate only to the items
calibrated. Issued by activolt {text((record.get('software') or {}).get('version', ''))}
from the record named above.</p></footer>"""
    style = _STYLE.replace("CERTIFICATE-ID", _css(ident))
    return (f"<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
            f"<title>Calibration certificate {text(ident)}</title>\n"
            f"<style>{style}</style>\n</head>\n<body>\n{body}\n</body>\n</html>\n")


def _data(value: Any) -> str:
    """A number for a ``data-value`` attribute: the record's value as JSON writes it."""
    if value is None:
        return ""
    return repr(float(value))


def _statistic(key: str, value: Any) -> tuple[str, str]:
    """A batch statistic as (label, shown): potentials in mV to 0.1 µV, lists joined."""
    if isinstance(value, (list, tuple)):
        return key.replace("_", " "), ", ".join(str(v) for v in value) or "none"
    if key.endswith("_V") and isinstance(value, (int, float)) and not isinstance(value, bool):
        return key[:-2].replace("_", " ") + " / mV", f"{value * 1e3:.4f}"
    if isinstance(value, float):
        return key.replace("_", " "), f"{value:.6g}"
    return key.replace("_", " "), "—" if value is None else str(value)


def _file_name(path: str) -> str:
    """The last part of a path written with ``/`` or ``\\``."""
    return path.replace("\\", "/").rsplit("/", 1)[-1]


def _css(value: str) -> str:
    """A CSS string's content: only letters, digits and hyphens (the identification is)."""
    return "".join(c for c in value if c.isalnum() or c == "-")
