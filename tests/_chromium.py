"""Headless Chromium for tests that look at pages: render a file and read a probe's verdict."""

import re
import shutil
import subprocess

import pytest

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
    pytest.fail("headless Chromium is needed for the report test; 'make test' installs Debian's 'chromium'")


def render(path, tmp_path, probe=PROBE, head="", flags=()):
    """Open a copy of the page at ``path`` with the probe added (and ``head`` at the start of its
    <head>); return the probe's findings. ``flags``: more Chromium switches."""
    copy = tmp_path / ("probed-" + path.name)
    copy.write_text(path.read_text().replace("<head>", "<head>" + head, 1).replace("</body>", probe + "</body>"))
    out = subprocess.run(
        [chromium(), "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run", *flags,
         "--disable-background-networking", "--disable-component-update", "--disable-sync",
         f"--user-data-dir={tmp_path / 'profile'}", "--window-size=1280,900", "--virtual-time-budget=5000",
         "--dump-dom", copy.as_uri()], capture_output=True, text=True, timeout=120)
    m = re.search(r'data-probe="([^"]*)"', out.stdout)
    assert m, f"no probe result in the rendered page; stderr: {out.stderr[-500:]}"
    return dict(kv.split("=", 1) for kv in m.group(1).split(";"))
