"""The HTML report in a real browser: every image loads and the gallery is there (slow; needs Chromium)."""

from __future__ import annotations

import shutil
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser") or shutil.which("google-chrome")
DRIVER = shutil.which("chromedriver")

pytestmark = [
    pytest.mark.slow,
    pytest.mark.skipif(
        not (CHROMIUM and DRIVER),
        reason="needs headless Chromium and chromedriver (CI installs Debian chromium chromium-driver)",
    ),
]


def _snakemake(*args: str) -> None:
    subprocess.run([sys.executable, "-m", "snakemake", *args], cwd=ROOT, check=True,
                   stdout=subprocess.PIPE, stderr=subprocess.STDOUT, text=True)


@pytest.fixture(scope="module")
def report_html(tmp_path_factory: pytest.TempPathFactory) -> Path:
    out = tmp_path_factory.mktemp("run")
    config = [f"outdir={out / 'results'}"]
    _snakemake("--cores", "2", "--config", *config)
    _snakemake("--cores", "1", "--config", *config, "--report", str(out / "report.html"))
    return out / "report.html"


def test_report_images_load_and_gallery_is_present(report_html: Path, tmp_path: Path) -> None:
    webdriver = pytest.importorskip("selenium.webdriver")
    from selenium.webdriver.common.by import By
    from selenium.webdriver.support.ui import WebDriverWait

    options = webdriver.ChromeOptions()
    options.binary_location = CHROMIUM
    for flag in ("--headless=new", "--no-sandbox", "--disable-dev-shm-usage", "--window-size=1400,1000"):
        options.add_argument(flag)
    driver = webdriver.Chrome(service=webdriver.ChromeService(executable_path=DRIVER), options=options)
    try:
        driver.get(report_html.as_uri())
        body = lambda d: d.find_element(By.TAG_NAME, "body").text  # noqa: E731
        WebDriverWait(driver, 30).until(lambda d: "demo_sdf" in body(d))
        driver.save_screenshot(str(tmp_path / "report.png"))
        driver.find_element(By.XPATH, "//*[normalize-space(text())='demo_sdf']").click()
        WebDriverWait(driver, 30).until(lambda d: "Gallery" in body(d))
        driver.find_element(By.XPATH, "//*[normalize-space(text())='Gallery']").click()
        WebDriverWait(driver, 30).until(lambda d: "gallery/24.svg" in body(d))
        cards = [line for line in body(driver).splitlines() if "/qc/gallery/" in line]
        assert len(cards) == 24
        driver.save_screenshot(str(tmp_path / "gallery.png"))
        images = driver.find_elements(By.TAG_NAME, "img")
        loaded = "return arguments[0].complete && arguments[0].naturalWidth > 0"
        broken = [i.get_attribute("src")[:80] for i in images if not driver.execute_script(loaded, i)]
        assert not broken, broken
        assert (tmp_path / "gallery.png").stat().st_size > 0
    finally:
        driver.quit()
    source = report_html.read_text()
    for name in ("01.svg", "24.svg", "charge_profile.png"):
        assert name in source
