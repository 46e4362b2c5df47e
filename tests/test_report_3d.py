"""The interactive 3-D figures (plotly, inline) draw in headless Chromium: no console error, no
network request, each plotly figure with its WebGL canvas and its axes."""

import json

import pytest

from _chromium import render

from cr3bp.cautions import caution_short

#: Collects console errors, uncaught errors and blocked requests before any of the page's scripts.
#: The Content-Security-Policy lets nothing load from anywhere but the page itself (inline
#: scripts and styles, data: and blob: images), so a script or font fetched from a network would be
#: refused and counted, and the figure would not draw.
HEAD = """<meta http-equiv="Content-Security-Policy" content="default-src 'none'; script-src 'unsafe-inline' 'unsafe-eval'; style-src 'unsafe-inline'; img-src data: blob:; font-src data:; connect-src 'none'">
<script>
window.__errors = []; window.__blocked = [];
const _err = console.error.bind(console);
console.error = (...a) => { window.__errors.push(a.map(String).join(' ')); _err(...a); };
window.addEventListener('error', e => window.__errors.push(String(e.message || e.type)));
document.addEventListener('securitypolicyviolation', e => window.__blocked.push(e.blockedURI || e.violatedDirective));
</script>
"""

PROBE = """
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
FLAGS = ("--use-angle=swiftshader", "--enable-unsafe-swiftshader")


def probe3d(path, tmp_path):
    import base64
    raw = render(path, tmp_path, probe=PROBE, head=HEAD, flags=FLAGS)["json"]
    return json.loads(base64.b64decode(raw + "=" * (-len(raw) % 4)).decode())


@pytest.fixture(scope="module")
def halo():
    import cr3bp
    return cr3bp.orbit(cr3bp.system("earth-moon"), "halo L2 south resonance=9:2")


def page_with(tmp_path, fragments):
    from cr3bp.scenario import page
    path = tmp_path / "report.html"
    page.write(path, "3-D test report", [(f"Figure {k}", f) for k, f in enumerate(fragments)])
    return path


def test_two_figures_draw_offline_with_one_plotlyjs(tmp_path, halo):
    from cr3bp.plotting.interactive import ReportFigures
    views = ReportFigures()
    path = page_with(tmp_path, [views.html(halo.to_plotly(), "first"),
                                views.html(halo.to_plotly(name="again"), "second")])
    text = path.read_text()
    assert "<script src=" not in text
    assert text.count("plotly.js v") == 1 and 3e6 < len(text) < 8e6    # the library once (~4.7 MB)
    p = probe3d(path, tmp_path)
    assert p["errors"] == [] and p["blocked"] == [] and p["network"] == []
    assert p["plots"] == 2 and p["drawn"] == 2
    assert all(caution_short() in t for t in p["titles"])
    assert all("[km]" in a and "rotating frame, CR3BP" in a for a in p["axes"])


def test_probe_sees_a_figure_whose_library_comes_from_the_network(tmp_path, halo):
    # the check itself can fail: plotly.js from a CDN is blocked, counted, and nothing draws
    frag = halo.to_plotly().to_html(full_html=False, include_plotlyjs="cdn")
    p = probe3d(page_with(tmp_path, [frag]), tmp_path)
    assert p["blocked"] and p["drawn"] == 0 and p["errors"]
