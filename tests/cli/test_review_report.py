"""``obvert report``: a self-contained HTML report, byte-identical per table, seen in a browser.

Runs on the committed real table tests/golden/input/test_patty.json. The browser check uses
headless Chromium and skips when it is not installed.
"""

from __future__ import annotations

import base64
import html
import io
import re
import shutil
import subprocess
from pathlib import Path

import matplotlib.image as mpimg
import numpy as np
import pytest
from click.testing import CliRunner

from obvert import CAUTION
from obvert.cli import main
from obvert.review import SECTIONS, read_manifest, report_html, spec_of_manifest

TABLE = Path(__file__).parents[1] / "golden" / "input" / "test_patty.json"
CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")


@pytest.fixture(scope="module")
def report(tmp_path_factory: pytest.TempPathFactory) -> Path:
    out = tmp_path_factory.mktemp("report") / "review.html"
    res = CliRunner().invoke(main, ["report", str(TABLE), "--out", str(out)])
    assert res.exit_code == 0, res.output
    assert f"caution: {CAUTION}" in res.stdout
    return out


def test_same_table_same_bytes(report: Path) -> None:
    m = read_manifest(TABLE)
    again = report_html(m, spec_of_manifest(m))
    assert again == report.read_bytes()


def test_report_is_self_contained_and_complete(report: Path) -> None:
    text = report.read_text("utf-8")
    # offline: no address outside the file (images are data: URIs)
    assert not re.search(r"""(src|href)=["'](?!data:)""", text)
    assert "http://" not in text and "https://" not in text
    images = re.findall(r'src="data:image/png;base64,([A-Za-z0-9+/=]+)"', text)
    assert len(images) == 6  # two maps, timelines, temperatures, log reduction, limits
    for b64 in images:
        png = base64.b64decode(b64)
        assert png.startswith(b"\x89PNG\r\n\x1a\n")  # PNG signature (PNG spec, ISO/IEC 15948)
        assert b"Software" not in png  # metadata cleared
        pixels = mpimg.imread(io.BytesIO(png), format="png")
        assert np.unique(pixels.reshape(-1, pixels.shape[-1]), axis=0).shape[0] > 20
    for heading in SECTIONS:
        assert f"<h2>{heading}</h2>" in text
    assert html.escape(CAUTION) in text
    m = read_manifest(TABLE)
    assert m["spec_hash"] in text
    assert "<tr><th>appliance.plate_temp_c</th><td>190.0</td></tr>" in text
    for field in ("Reviewer", "Date", "Decision"):
        assert f"<tr><th>{field}</th><td></td></tr>" in text


def test_bad_file_exits_2_naming_it(tmp_path: Path) -> None:
    bad = tmp_path / "empty.json"
    bad.write_text("[]")
    res = CliRunner().invoke(main, ["report", str(bad), "--out", str(tmp_path / "r.html")])
    assert res.exit_code == 2 and "empty.json" in res.stderr
    assert not (tmp_path / "r.html").exists()
    res = CliRunner().invoke(main, ["report", "--help"])
    assert res.exit_code == 0 and "--out" in res.stdout


def _chromium(*args: str) -> subprocess.CompletedProcess:
    flags = ["--headless", "--no-sandbox", "--disable-gpu", "--hide-scrollbars"]
    return subprocess.run(
        [CHROMIUM, *flags, *args], capture_output=True, text=True, timeout=180, check=False
    )


@pytest.mark.skipif(CHROMIUM is None, reason="chromium is not installed")
def test_report_renders_in_headless_chromium(report: Path, tmp_path: Path) -> None:
    url = report.resolve().as_uri()
    dom = _chromium("--dump-dom", url)
    assert dom.returncode == 0, dom.stderr[-2000:]
    for heading in SECTIONS:
        assert f"<h2>{heading}</h2>" in dom.stdout
    shot = tmp_path / "shot.png"
    res = _chromium(f"--screenshot={shot}", "--window-size=1000,3000", url)
    assert res.returncode == 0 and shot.exists(), res.stderr[-2000:]
    pixels = mpimg.imread(shot)
    colours = np.unique((pixels[..., :3] * 255).astype(np.uint8).reshape(-1, 3), axis=0)
    assert colours.shape[0] > 50  # plots drawn, not a blank page
