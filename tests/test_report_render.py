"""The HTML report renders in headless Chromium with no broken images and the caution visible."""

import re
import shutil
import subprocess

import pytest

from cr3bp import report
from cr3bp.cautions import CAUTION

PROBE = """
<script>
window.addEventListener('load', () => {
  const broken = [...document.images].filter(i => !(i.complete && i.naturalWidth > 0)).length;
  const c = document.getElementById('caution').getBoundingClientRect();
  const style = getComputedStyle(document.getElementById('caution'));
  const visible = c.width > 0 && c.height > 0 && c.top < window.innerHeight && style.visibility !== 'hidden'
                  && style.display !== 'none';
  document.body.setAttribute('data-probe', `images=${document.images.length};broken=${broken};caution=${visible}`);
});
</script>
"""


def chromium():
    for name in ("chromium", "chromium-browser", "google-chrome"):
        if shutil.which(name):
            return shutil.which(name)
    pytest.fail("headless Chromium is needed for the report test; .ci/run installs Debian's 'chromium'")


def render(path, tmp_path):
    out = subprocess.run(
        [chromium(), "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
         "--disable-background-networking", "--disable-component-update", "--disable-sync",
         f"--user-data-dir={tmp_path / 'profile'}", "--window-size=1280,900", "--virtual-time-budget=5000",
         "--dump-dom", path.as_uri()], capture_output=True, text=True, timeout=120)
    m = re.search(r'data-probe="([^"]*)"', out.stdout)
    assert m, f"no probe result in the rendered page; stderr: {out.stderr[-500:]}"
    return dict(kv.split("=") for kv in m.group(1).split(";"))


def make_report(tmp_path, extra_img=None):
    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    fig, ax = plt.subplots()
    ax.plot([0, 1], [0, 1])
    png = tmp_path / "fig.png"
    fig.savefig(png)
    plt.close(fig)
    sections = [("Orbit", report.kv_table([("period_days", 6.56), ("jacobi", 3.05)]) + report.figure(png, "test")),
                ("Checks", report.table(["check", "required", "actual", "margin", "result"],
                                        [report.check_row({"name": "min altitude", "required": 1000.0,
                                                           "actual": 1500.0, "margin": 500.0, "passed": True})]))]
    if extra_img:
        sections.append(("Broken", extra_img))
    path = tmp_path / "report.html"
    report.write(path, "Test report", sections)
    text = path.read_text()
    path.write_text(text.replace("</body>", PROBE + "</body>"))
    return path


def test_report_renders_with_images_and_caution(tmp_path):
    path = make_report(tmp_path)
    assert CAUTION in path.read_text()
    probe = render(path, tmp_path)
    assert probe == {"images": "1", "broken": "0", "caution": "true"}


def test_probe_detects_a_broken_image(tmp_path):
    # the check itself can fail: a deliberately broken image is counted
    path = make_report(tmp_path, extra_img='<img src="data:image/png;base64,AAAA">')
    assert render(path, tmp_path)["broken"] == "1"
