"""The HTML report is one self-contained, escaped file with every section and plot."""

from __future__ import annotations

import base64
import re
from html.parser import HTMLParser

import pytest
from test_derived import synthetic_result

from fitz_tool.derived import design_values
from fitz_tool.measurement import Provenance
from fitz_tool.outputs.html_report import render_html_report
from fitz_tool.outputs.plots import fit_figures
from fitz_tool.outputs.report import run_record

HOSTILE = "<script>alert(1)</script>.csv"


class _Tags(HTMLParser):
    def __init__(self):
        super().__init__()
        self.tags: list[tuple[str, dict]] = []

    def handle_starttag(self, tag, attrs):
        self.tags.append((tag, dict(attrs)))


@pytest.fixture(scope="module")
def hostile_report():
    result = synthetic_result(source=f"bench/{HOSTILE}")
    prov = result.measurement.provenance
    hostile_prov = Provenance(source=prov.source, sha256=prov.sha256, form=prov.form,
                              columns={"impedance": '|Z| "<img src=x onerror=alert(2)>"'}, units={},
                              steps=("removed <b>shunt</b> & skew",), warnings=("row 7 <dropped>",))
    object.__setattr__(result.measurement, "provenance", hostile_prov)
    design = design_values(result, [100e3])
    record = run_record({"command": "fit", "file": HOSTILE, "model": "Rs + L1 || Cp", "at": "100k"}, [],
                        "0.1.0")
    figures = fit_figures(result, design)
    return render_html_report(result, None, design, record, figures), figures


def test_report_is_self_contained(hostile_report):
    html, _ = hostile_report
    parser = _Tags()
    parser.feed(html)
    names = [t for t, _ in parser.tags]
    assert "script" not in names and "link" not in names and "iframe" not in names
    text = re.sub(r"data:image/png;base64,[A-Za-z0-9+/=]+", "data:", html)
    assert "http:" not in text and "https:" not in text and "//" not in text and "url(" not in text
    for _tag, attrs in parser.tags:
        if "src" in attrs:
            assert attrs["src"].startswith("data:image/png;base64,")
        assert not any(k.startswith("on") for k in attrs), "event handler attribute"


def test_hostile_strings_are_escaped(hostile_report):
    html, _ = hostile_report
    assert "<script>" not in html and "<img src=x" not in html and "<b>shunt" not in html
    assert "<title>Equivalent circuit of bench/&lt;script&gt;alert(1)&lt;/script&gt;.csv</title>" in html
    assert "removed &lt;b&gt;shunt&lt;/b&gt; &amp; skew" in html and "row 7 &lt;dropped&gt;" in html


def test_every_plot_is_embedded(hostile_report):
    html, figures = hostile_report
    images = re.findall(r'src="data:image/png;base64,([A-Za-z0-9+/=]+)"', html)
    assert len(images) == len(figures) == 3
    for data in images:
        png = base64.b64decode(data)
        # PNG file signature (PNG specification, from memory)
        assert png[:8] == b"\x89PNG\r\n\x1a\n" and len(png) > 10_000


def test_report_has_every_section(hostile_report):
    html, _ = hostile_report
    result = synthetic_result()  # same seed and values as the fixture: the Cramer-Rao covariance built here
    names = result.correlation_names
    rel_percent = 100 * result.parameters["L1"].stderr / result.parameters["L1"].value
    corr_l_cp = result.correlation[names.index("L1"), names.index("Cp")]
    headings = ["Fitted values", "Design values", "Plots", "Fit quality", "Flags", "Measurement warnings",
                "Model choice", "Correlation matrix", "Safety"]
    # results first, provenance last: the headings come in this order, the record at the very end
    positions = [html.index(f"<h2>{heading}</h2>") for heading in headings]
    assert positions == sorted(positions)
    assert html.index('<h2 id="provenance">') > positions[-1]
    for summary in ("Part and input", "How the data was read and corrected", "Options of this run"):
        assert html.index(f"<details><summary>{summary}</summary>") > html.index('<h2 id="provenance">')
    assert "ab" * 32 in html  # the input checksum
    # value, its relative error (two digits) and the L1-Cp correlation, all from the test's own covariance
    assert f"22.0000 \u00b5H \u00b1 {rel_percent:.2g} %" in html and f"{corr_l_cp:.3f}" in html
    assert corr_l_cp < -0.5  # L and C of one resonance trade against each other (common practice, no source)
    assert "--at" in html and "100k" in html and "0.1.0" in html
    for caution in ("Stored charge", "scope ground clip", "Shunt dissipation", "Instrument ratings",
                    "local electrical codes", "licensed practice"):
        assert caution in html
