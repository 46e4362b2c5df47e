"""Headless Chromium for tests that look at pages: render a file and read a probe's verdict."""

import base64
import json
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


#: Collects console errors, uncaught errors and blocked requests before any of the page's scripts.
#: The Content-Security-Policy lets nothing load from anywhere but the page itself (inline
#: scripts and styles, data: and blob: images), so a script or font fetched from a network would be
#: refused and counted, and the figure would not draw.
HEAD_3D = """<meta http-equiv="Content-Security-Policy" content="default-src 'none'; script-src 'unsafe-inline' 'unsafe-eval'; style-src 'unsafe-inline'; img-src data: blob:; font-src data:; connect-src 'none'">
<script>
window.__errors = []; window.__blocked = [];
const _err = console.error.bind(console);
console.error = (...a) => { window.__errors.push(a.map(String).join(' ')); _err(...a); };
window.addEventListener('error', e => window.__errors.push(String(e.message || e.type)));
document.addEventListener('securitypolicyviolation', e => window.__blocked.push(e.blockedURI || e.violatedDirective));
</script>
"""

PROBE_3D = """
<script>
window.addEventListener('load', () => setTimeout(() => {
  const plots = [...document.querySelectorAll('.js-plotly-plot')];
  const drawn = plots.filter(p => {
    const c = p.querySelector('.gl-container canvas');
    return c && c.width > 0 && c.height > 0 && p.querySelector('svg.main-svg') && p._fullLayout
           && p._fullLayout.scene && p._fullLayout.scene._scene && p._fullLayout.scene._scene.glplot;
  }).length;
  const net = performance.getEntriesByType('resource').map(r => r.name).filter(n => !n.startsWith('data:') && !n.startsWith('blob:'));
  const titles = plots.map(p => p._fullLayout ? p._fullLayout.title.text : '');
  const axes = plots.map(p => p._fullLayout && p._fullLayout.scene ? p._fullLayout.scene.xaxis.title.text : '');
  document.body.setAttribute('data-probe', 'json=' + btoa(unescape(encodeURIComponent(JSON.stringify(
    {plots: plots.length, drawn, errors: window.__errors, blocked: window.__blocked, network: net, titles, axes})))));
}, 1500));
</script>
"""

#: WebGL in headless Chromium without a GPU: the software rasteriser.
FLAGS_3D = ("--use-angle=swiftshader", "--enable-unsafe-swiftshader")


def probe3d(path, tmp_path):
    """Render ``path`` and return what its plotly figures did: ``plots``, ``drawn`` (with a WebGL
    canvas and the scene built), ``errors``, ``blocked`` (refused requests), ``network``
    (resources fetched other than data:/blob:), ``titles`` and x-axis titles ``axes``."""
    raw = render(path, tmp_path, probe=PROBE_3D, head=HEAD_3D, flags=FLAGS_3D)["json"]
    return json.loads(base64.b64decode(raw + "=" * (-len(raw) % 4)).decode())
