"""Each bundled sample's HTML report, rendered by headless Chromium: it loads with no external request, the
values come before the provenance, and the screenshot is a real picture.

Skipped when Chromium is not installed (CI installs the Debian package ``chromium``). Set
``FITZ_SCREENSHOT_DIR`` to keep the screenshots for a look.
"""

from __future__ import annotations

import json
import os
import re
import shutil
import subprocess
from pathlib import Path

import matplotlib.image
import numpy as np
import pytest

from fitz_tool.cli import main

CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")
pytestmark = [pytest.mark.skipif(CHROMIUM is None, reason="chromium is not installed"), pytest.mark.slow]

SAMPLES = Path(__file__).resolve().parent.parent / "sample_measurements"

#: (file, model, extra options) for each bundled sample bench file (see sample_measurements/README.md)
CASES = [
    ("output_choke_scope.csv", "(Rs + L1 || Rcore) || Cp", ["--shunt", "0.1", "--at", "400k"]),
    ("bulk_capacitor_analyzer.csv", "Rs + Ls + C1", ["--at", "100k"]),
    ("ferrite_bead_rx.txt", "Rdc + Lb || Rb || Cb", []),
    ("input_capacitor_gain_phase.csv", "Rs + Ls + C1", ["--reference", "1"]),
    ("bootstrap_capacitor_vi_latin1.csv", "Rs + Ls + C1", []),
    ("snubber_cap_reflection.s1p", "Rs + Ls + C1",
     ["--open", str(SAMPLES / "snubber_fixture_open.s1p"),
      "--short", str(SAMPLES / "snubber_fixture_short.s1p")]),
    ("output_bulk_shunt_through.s2p", "Rs + Ls + C1", ["--through", "shunt"]),
]

#: Hosts the browser itself calls for its own services (updates, time, accounts) however it is started;
#: they come from the browser, never from the page, and the resolver rule below keeps them off the network.
BROWSER_SERVICE_HOSTS = re.compile(r"^https?://([a-z0-9-]+\.)*(google\.com|googleapis\.com|gvt1\.com|"
                                   r"gstatic\.com|googleusercontent\.com)(/|:|$)")


def _render(html: Path, out: Path) -> tuple[Path, list[str]]:
    """Screenshot of ``html`` and every URL the browser's network log saw."""
    png, netlog = out / f"{html.stem}.png", out / f"{html.stem}_net.json"
    command = [CHROMIUM, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
               "--disable-background-networking", "--disable-component-update", "--disable-sync",
               f"--user-data-dir={out / ('profile_' + html.stem)}", "--host-resolver-rules=MAP * ~NOTFOUND",
               f"--log-net-log={netlog}", "--window-size=1100,1800", "--hide-scrollbars",
               f"--screenshot={png}", html.resolve().as_uri()]
    subprocess.run(command, check=True, capture_output=True, timeout=60)
    text = netlog.read_text(errors="replace") if netlog.exists() else ""
    try:
        events = json.loads(text).get("events", [])
    except json.JSONDecodeError:  # the log of a browser that quit at once may lack its closing bracket
        events = []
    urls = {str(e.get("params", {}).get("url")) for e in events if "url" in e.get("params", {})}
    urls |= set(re.findall(r'"url":"([^"]+)"', text))
    return png, sorted(urls)


@pytest.fixture(scope="module")
def reports(tmp_path_factory):
    out = tmp_path_factory.mktemp("reports")
    made = []
    for name, model, options in CASES:
        html = out / f"{Path(name).stem}.html"
        argv = ["fit", str(SAMPLES / name), "--model", model, *options, "--report", str(html), "--quiet"]
        code = main(argv)
        assert code == 0, name
        made.append(html)
    return out, made


def test_reports_name_nothing_outside_the_file(reports):
    _, made = reports
    for html in made:
        text = html.read_text(encoding="utf-8")
        assert "<script" not in text and "<link" not in text and "@import" not in text, html.name
        assert not re.search(r"""(?:src|href)\s*=\s*["']?\s*(?:https?:)?//""", text), html.name
        assert not re.search(r"url\(\s*['\"]?(?:https?:)?//", text), html.name
        # results first: the values table, then design values and plots, and the provenance last
        values, plots = text.index('<table id="values">'), text.index("<h2>Plots</h2>")
        assert values < plots < text.index('id="provenance"')
        assert text.index('id="provenance"') < text.index("<details>")
        assert "\u03a9" in text and "mohm" not in text and " uH" not in text  # unit symbols, not spellings


def test_chromium_renders_each_report_without_a_network_request(reports):
    out, made = reports
    keep = os.environ.get("FITZ_SCREENSHOT_DIR")
    for html in made:
        png, urls = _render(html, out)
        page = html.resolve().as_uri()
        page_requests = [u for u in urls if not BROWSER_SERVICE_HOSTS.match(u) and u != page]
        assert page_requests == [], (html.name, page_requests)
        image = matplotlib.image.imread(str(png))[..., :3]
        assert image.shape[:2] == (1800, 1100)
        # a rendered page, not a blank one: dark text pixels and coloured plot pixels are both present
        assert np.mean(image.max(axis=-1) < 0.3) > 0.002, html.name
        assert np.mean(np.ptp(image, axis=-1) > 0.3) > 0.002, html.name
        if keep:
            Path(keep).mkdir(parents=True, exist_ok=True)
            shutil.copy(png, Path(keep) / png.name)
