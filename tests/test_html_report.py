"""The HTML report (``RUN.report.html``): self-contained, escaped, the record's numbers, and
rendered by a real headless browser.

The check values are the record's own numbers (the report must show them, not its own) and the
rules of the trade: HTML escaping of user text (HTML Living Standard, 13.1.2.6, common
practice), a page that fetches nothing and runs nothing (Content-Security-Policy, W3C CSP
Level 3, common practice), and the safety cautions of the text report.
"""

from __future__ import annotations

import base64
import hashlib
import json
import math
import re
import shutil
import struct
from html.parser import HTMLParser
from pathlib import Path

import pytest

from activolt.cli import main
from activolt.report.cautions import ACID, HYDROGEN
from activolt.report.html import report_html

SAMPLE = Path(__file__).resolve().parents[1] / "src" / "activolt" / "sample_data"
#: What an operator field might hold in an attack: a script, an image with an event handler,
#: a closing tag, and a right-to-left override that would hide text.
INJECTED = ('<script>document.title="ran";window.ran=1</script>'
            '<img src=x onerror="window.ran=2"></dd>\u202eevil')
CHROMIUM_ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic",
                 "--no-first-run", "--disable-background-networking",
                 "--disable-component-update", "--disable-sync"]


class _Page(HTMLParser):
    """Every start tag with its attributes, the text of ``<title>`` and of every ``<style>``."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.tags: list[tuple[str, dict[str, str | None]]] = []
        self.style = ""
        self.text: list[str] = []
        self._in: list[str] = []

    def handle_starttag(self, tag, attrs):
        self.tags.append((tag, dict(attrs)))
        self._in.append(tag)

    def handle_endtag(self, tag):
        if self._in and self._in[-1] == tag:
            self._in.pop()

    def handle_data(self, data):
        if self._in and self._in[-1] == "style":
            self.style += data
        else:
            self.text.append(data)


def _parse(page: str) -> _Page:
    parser = _Page()
    parser.feed(page)
    parser.close()
    return parser


@pytest.fixture(scope="module")
def output_set(tmp_path_factory):
    """The bundled sample run reduced by ``activolt reduce``, its operator replaced by an
    attack (the readings and the rest of the metadata as shipped)."""
    folder = tmp_path_factory.mktemp("html")
    shutil.copy(SAMPLE / "kestrel_hcl_25C.csv", folder / "run.csv")
    meta = (SAMPLE / "kestrel_hcl_25C.toml").read_text(encoding="utf-8")
    meta = re.sub(r"(?m)^operator = .*$", lambda _: "operator = " + json.dumps(INJECTED), meta)
    (folder / "run.toml").write_text(meta, encoding="utf-8")
    out = folder / "out"
    assert main(["reduce", str(folder / "run.csv"), "--out", str(out)]) == 0
    return out


def _record(out: Path) -> dict:
    return json.loads((out / "run.record.json").read_text(encoding="utf-8"))


def _page(out: Path) -> str:
    return (out / "run.report.html").read_text(encoding="utf-8")


# --- structure and escaping, without a browser ---------------------------------------------------

def test_user_text_is_escaped_never_markup():
    record = {"input": {"file": "a<b>.csv", "sha256": "00"}, "series": "<i>s</i>",
              "run_info": {"operator": INJECTED}, "warnings": ["<b>w</b>"],
              "points": [{"line": 3, "molality_mol_kg": 0.01, "emf_V": None,
                          "electrode": "<u>E1</u>", "used_in_fit": False,
                          "flag": "<script>x</script>"}]}
    page = report_html(record)
    parsed = _parse(page)
    tags = {tag for tag, _ in parsed.tags}
    assert not tags & {"script", "i", "b", "u", "img", "iframe", "object", "embed"}
    shown = "".join(parsed.text)
    for raw in ("<script>document.title=", "a<b>.csv", "<i>s</i>", "<b>w</b>", "<u>E1</u>",
                "<script>x</script>"):
        assert raw in shown  # shown as text
    assert "\u202e" not in page and "\\u202e" in shown  # the override is written as an escape


def test_a_page_that_fetches_nothing_runs_nothing_and_prints(output_set):
    parsed = _parse(_page(output_set))
    assert not [t for t, _ in parsed.tags if t in ("script", "iframe", "object", "embed", "link",
                                                   "base", "form")]
    for tag, attrs in parsed.tags:
        assert not [a for a in attrs if a.startswith("on")], tag  # no event handlers
        for key in ("src", "href", "action", "srcset"):
            if attrs.get(key) is not None:
                assert attrs[key].startswith("data:image/png;base64,"), (tag, key)
    policy = next(a["content"] for t, a in parsed.tags
                  if t == "meta" and a.get("http-equiv") == "Content-Security-Policy")
    assert "default-src 'none'" in policy and "script-src" not in policy
    assert "@media print" in parsed.style and "url(" not in parsed.style
    assert "@import" not in parsed.style


def test_the_figures_are_the_output_sets_png_files(output_set):
    parsed = _parse(_page(output_set))
    sources = [a["src"] for t, a in parsed.tags if t == "img"]
    embedded = [base64.b64decode(s.split(",", 1)[1]) for s in sources]
    files = [(output_set / f"run.{name}.png").read_bytes()
             for name in ("extrapolation", "residuals", "gamma")]
    assert embedded == files
    for png in embedded:  # a PNG with a real size (IHDR width and height, PNG spec 11.2.2)
        assert png[:8] == b"\x89PNG\r\n\x1a\n"
        width, height = struct.unpack(">II", png[16:24])
        assert width > 100 and height > 100


def test_the_numbers_are_the_records(output_set):
    record, page = _record(output_set), _page(output_set)
    parsed = _parse(page)

    def values(quantity: str) -> list[float]:
        return [float(a["data-value"]) for _, a in parsed.tags
                if a.get("data-quantity") == quantity and a.get("data-value")]

    e0 = record["standard_potential_V"]
    assert values("standard_potential_V") == [e0["value"]]
    assert values("expanded_uncertainty_95") == [e0["expanded_uncertainty_95"]]
    used = [p for p in record["points"] if p["used_in_fit"]]
    assert values("gamma_pm") == [p["gamma_pm"] for p in used]
    assert values("residual_V") == [p["residual_V"] for p in used]
    assert values("molality_mol_kg") == [p["molality_mol_kg"] for p in record["points"]]
    assert values("u_V") == [b["u_V"] for b in record["uncertainty_budget"]["lines"]]
    assert values("osmotic_coefficient") == [
        p["osmotic_coefficient"] for p in record["derived_properties"]["points"]]
    # shown as the text report shows them (the same rounding: u to two significant digits)
    report = (output_set / "run.report.txt").read_text(encoding="utf-8")
    shown_e0 = re.search(r"E° = ([0-9.]+ ± [0-9.]+ mV) \(k = 1\)", report).group(1)
    assert f">{shown_e0}<" in page
    for p in used:
        u = p["u_gamma_pm"]
        places = 1 - math.floor(math.log10(u))  # two significant digits of u
        assert f">{p['gamma_pm']:.{places}f} ± {u:.{places}f}<" in page
    # the record the page names is the record written
    digest = hashlib.sha256((output_set / "run.record.json").read_bytes()).hexdigest()
    assert digest in page and "run.record.json" in page


def test_the_safety_cautions_of_the_text_report(output_set):
    page = _parse(_page(output_set))
    shown = "".join(page.text)
    assert HYDROGEN in shown and ACID in shown  # an HCl Harned cell: hydrogen and acid
    assert "local codes" in shown


def test_without_figures_the_page_says_so(tmp_path, capsys):
    shutil.copy(SAMPLE / "kestrel_hcl_25C.csv", tmp_path / "run.csv")
    shutil.copy(SAMPLE / "kestrel_hcl_25C.toml", tmp_path / "run.toml")
    assert main(["reduce", str(tmp_path / "run.csv"), "--no-figures"]) == 0
    page = (tmp_path / "run_activolt" / "run.report.html").read_text(encoding="utf-8")
    assert "<img" not in page and "No figures were drawn" in page


def test_a_temperature_studys_page_shows_the_studys_numbers(tmp_path, capsys):
    # the synthetic study of test_temperature_outputs (Bates & Bower E°(t), nine isotherms)
    from test_temperature_outputs import write_study

    out = tmp_path / "out"
    assert main(["reduce", str(write_study(tmp_path)), "--out", str(out)]) == 0
    record = json.loads((out / "study.record.json").read_text(encoding="utf-8"))
    parsed = _parse((out / "study.report.html").read_text(encoding="utf-8"))
    study = record["temperature_study"]

    def values(quantity: str) -> list[float]:
        return [float(a["data-value"]) for _, a in parsed.tags
                if a.get("data-quantity") == quantity and a.get("data-value")]

    for quantity in ("delta_H_J_mol", "delta_S_J_K_mol", "delta_G_J_mol"):
        assert values(quantity) == [study[quantity]["value"]]
    assert values("isotherm_temperature_K") == [p["isotherm_temperature_K"]
                                                for p in record["points"]]
    assert len([a for t, a in parsed.tags if t == "img"]) == 2  # E°(T) and γ± by isotherm
    assert "temperature study" in "".join(parsed.text)


# --- a real browser -------------------------------------------------------------------------

def _chromium() -> str:
    for candidate in ("/usr/bin/chromium", shutil.which("chromium"),
                      shutil.which("chromium-browser")):
        if candidate and Path(candidate).exists():
            return candidate
    pytest.skip("no Chromium found (/usr/bin/chromium; Debian package 'chromium'): the "
                "browser check of the HTML report is skipped")
    raise AssertionError  # not reached


def test_the_report_in_a_headless_browser(output_set, tmp_path):
    sync_api = pytest.importorskip(
        "playwright.sync_api", reason="the Python package 'playwright' is not installed "
        "(pip install -e '.[test]'); the browser check of the HTML report is skipped")
    executable = _chromium()
    messages: list[str] = []
    errors: list[str] = []
    requests: list[str] = []
    with sync_api.sync_playwright() as playwright:
        browser = playwright.chromium.launch(executable_path=executable, args=CHROMIUM_ARGS)
        try:
            page = browser.new_page(viewport={"width": 1100, "height": 900})
            page.on("console", lambda m: messages.append(f"{m.type}: {m.text}"))
            page.on("pageerror", lambda e: errors.append(str(e)))
            page.on("request", lambda r: requests.append(r.url))
            page.goto((output_set / "run.report.html").as_uri())
            page.wait_for_load_state("load")
            # the injected script did not run: the title is the report's, nothing was set
            assert page.title().startswith("activolt reduction of run.csv")
            assert page.evaluate("typeof window.ran") == "undefined"
            assert page.locator("script").count() == 0
            operator = page.locator("dt", has_text="operator").locator("xpath=following::dd[1]")
            assert operator.inner_text().startswith('<script>document.title="ran"')
            # every figure decoded and visible, one after the other
            images = page.locator("figure img")
            assert images.count() == 3
            for i in range(images.count()):
                image = images.nth(i)
                image.scroll_into_view_if_needed()
                assert image.evaluate("i => i.complete && i.naturalWidth > 0 "
                                      "&& i.naturalHeight > 0")
                box = image.bounding_box()
                assert box is not None and box["width"] > 200 and box["height"] > 100
                assert image.evaluate(
                    "i => { const r = i.getBoundingClientRect(); return r.bottom > 0 && "
                    "r.top < window.innerHeight && r.right > 0 && "
                    "r.left < window.innerWidth; }")
            # the E° cell shows the record's value
            shown = page.locator("#standard-potential span[data-quantity=standard_potential_V]")
            assert float(shown.get_attribute("data-value")) == \
                _record(output_set)["standard_potential_V"]["value"]
            page.evaluate("window.scrollTo(0, 0)")
            shot = tmp_path / "report.png"
            page.screenshot(path=str(shot), full_page=True)
            page.emulate_media(media="print")
            assert page.locator("section.safety").is_visible()
        finally:
            browser.close()
    assert shot.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
    assert struct.unpack(">II", shot.read_bytes()[16:24])[1] > 900  # the whole page
    assert not errors, errors
    assert not [m for m in messages if m.startswith(("error", "warning"))], messages
    assert all(url.startswith(("file:", "data:")) for url in requests), requests
