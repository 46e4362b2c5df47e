"""The HTML report renders in headless Chromium with no broken images and the caution visible."""

from _chromium import render

from cr3bp.scenario import page as report
from cr3bp.cautions import CAUTION

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
