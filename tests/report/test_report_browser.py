"""report.html in headless Chromium (Debian's chromium + chromedriver, driven by selenium).

The page loads, every image decodes, and the page requests nothing over the network.
Skipped cleanly when chromium, chromedriver or selenium is absent (``.ci/run`` installs them).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from fleetfuel.report.outputs import REPORT_HTML, write_outputs

CHROMIUM = Path("/usr/bin/chromium")
CHROMEDRIVER = Path("/usr/bin/chromedriver")
CHROME_FLAGS = (
    "--headless=new",
    "--no-sandbox",  # running as root in CI containers
    "--disable-gpu",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
    "--no-first-run",
    "--disable-quic",
)


@pytest.fixture
def driver(tmp_path: Path):
    webdriver = pytest.importorskip("selenium.webdriver")
    from selenium.webdriver.chrome.service import Service

    if not (CHROMIUM.is_file() and CHROMEDRIVER.is_file()):
        pytest.skip(f"needs {CHROMIUM} and {CHROMEDRIVER} (Debian packages chromium, chromium-driver)")
    options = webdriver.ChromeOptions()
    options.binary_location = str(CHROMIUM)
    for flag in CHROME_FLAGS:
        options.add_argument(flag)
    profile = tmp_path / "chrome-profile"
    profile.mkdir()
    options.add_argument(f"--user-data-dir={profile}")
    try:
        browser = webdriver.Chrome(service=Service(executable_path=str(CHROMEDRIVER)), options=options)
    except Exception as exc:  # a browser that cannot start here is an environment matter, not a report bug
        pytest.skip(f"headless chromium did not start: {str(exc).splitlines()[0] if str(exc) else exc!r}")
    try:
        yield browser
    finally:
        browser.quit()


def test_report_loads_images_decode_and_no_network(driver, result, tmp_path: Path) -> None:
    out = tmp_path / "out"
    write_outputs(result, out, out / ".work")
    page = out / REPORT_HTML
    driver.get(page.as_uri())
    assert driver.execute_script("return document.readyState") == "complete"
    assert "Fleet fuel and energy forecast" in driver.title
    images = driver.execute_script(
        "return Array.from(document.images).map(i => [i.complete, i.naturalWidth, i.currentSrc.slice(0, 22)])"
    )
    assert len(images) == 7  # as test_html: every figure of the fixture
    assert all(done and width > 0 and src == "data:image/png;base64," for done, width, src in images)
    resources = driver.execute_script(
        "return performance.getEntriesByType('resource').map(e => e.name)"
    )
    assert not [r for r in resources if r.startswith(("http:", "https:"))], resources
    # the escaped data text shows as text, not as markup
    body = driver.find_element("tag name", "body").text
    assert "<script>alert(1)</script> depot" in body
    assert driver.execute_script("return document.scripts.length") == 0


def test_the_checks_catch_a_network_image(driver, tmp_path: Path) -> None:
    # negative control: a page with a remote image must fail both checks used above
    page = tmp_path / "remote.html"
    page.write_text('<!DOCTYPE html><html><body><img src="http://127.0.0.1:9/x.png"></body></html>')
    driver.get(page.as_uri())
    widths = driver.execute_script("return Array.from(document.images).map(i => i.naturalWidth)")
    resources = driver.execute_script("return performance.getEntriesByType('resource').map(e => e.name)")
    assert widths == [0]
    assert any(r.startswith("http:") for r in resources)
