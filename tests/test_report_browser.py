"""The HTML report opened in a real browser: headless Chromium (Debian's ``chromium``).

Each report is loaded from a file with the network cut off (every host name resolves to
nothing), then checked after layout: every picture (the map, the blocking curves, the study
charts) is present with a non-zero size and drawn content, the run's figures are in the
page's text, the screenshot is not blank where the pictures are, and the page asked for
nothing but itself (and the pictures embedded in it).

Outside references: the page's text is compared with ``Evaluation.to_dict()`` /
``Plan.to_dict()`` formatted here; pixels are read back from Chromium's own screenshot.

Without chromium the test is skipped, unless NETDIM_REQUIRE_BROWSER is set (as .ci/run does),
when it fails.
"""

from __future__ import annotations

import io
import os
import pathlib
import re

import numpy as np
import pytest

pytest.importorskip("matplotlib")
from _chromium import Chromium, find_chromium
from PIL import Image

import netdim
from netdim.cli import main
from netdim.evaluate import default_method
from netdim.report import figures
from netdim.report.html import (
    chart_section,
    evaluation_html,
    html_document,
    plan_html,
    write_report,
)
from netdim.studies.compare import compare_designs
from netdim.studies.failures import failure_study
from netdim.studies.growth import growth_study
from netdim.studies.headroom import headroom_study
from netdim.studies.variants import build_variant, parse_variants

NETWORKS = pathlib.Path(__file__).parent.parent / "networks"
WIDTH = 1400

# Every picture on the page: its size in CSS pixels after layout, where it is, and the size
# of what is drawn inside it (getBBox: zero when the SVG's content did not render).
PROBE = """JSON.stringify({
  figures: [...document.querySelectorAll('figure.plot')].map(f => {
    const svg = f.querySelector('svg'); const r = svg.getBoundingClientRect();
    const bb = svg.getBBox();
    return {id: f.id, x: r.left + scrollX, y: r.top + scrollY, w: r.width, h: r.height,
            bw: bb.width, bh: bb.height};
  }),
  text: document.body.innerText,
  rows: document.querySelectorAll('tbody tr').length
})"""


@pytest.fixture(scope="module")
def browser(tmp_path_factory):
    binary = find_chromium()
    if binary is None:
        if os.environ.get("NETDIM_REQUIRE_BROWSER"):
            pytest.fail("NETDIM_REQUIRE_BROWSER is set but chromium is not installed "
                        "(Debian: apt-get install chromium)")
        pytest.skip("chromium is not installed (Debian: apt-get install chromium); set "
                    "NETDIM_REQUIRE_BROWSER=1 to make this a failure")
    with Chromium(binary, str(tmp_path_factory.mktemp("chromium-profile"))) as b:
        yield b


def _pages(tmp_path):
    """The reports to open: (name, path, expected figure ids, strings the text must hold)."""
    out = []
    net = netdim.read_network(NETWORKS / "regional-telephone.yaml")
    ev = netdim.evaluate(net)
    path = write_report(evaluation_html(net, ev, kind="telephone"), tmp_path / "eval.html")
    d = ev.to_dict()
    want = [r["id"] for r in d["demands"]]
    worst = max(d["demands"], key=lambda r: r["blocking"] / r["target"])
    want += [f"{worst['blocking']:.4f}", f"{worst['target']:.4f}"]
    want += [f"{100 * r['utilisation']:.1f}" for r in d["links"]]
    out.append(("regional evaluation", path, {"fig-map", "fig-curves"}, want))

    camp = netdim.read_network(NETWORKS / "campus-parking.yaml")
    plan = netdim.dimension(camp, bound_time=1.0)
    path = write_report(plan_html(plan, kind="parking"), tmp_path / "plan.html")
    p = plan.to_dict()
    want = [f"{p['cost']:,.0f}" if float(p["cost"]).is_integer() else f"{p['cost']:,.2f}",
            f"{100 * p['gap']:.1f}%", *p["dropped_links"]]
    want += [f"{r['capacity']:,}" for r in p["links"]]
    want += [r["id"] for r in p["demands"]]
    out.append(("campus plan", path, {"fig-map", "fig-curves"}, want))

    # each bundled network's report as the command line writes it
    for name in ("three-villages", "regional-telephone", "campus-parking"):
        path = tmp_path / f"cli-{name}.html"
        src = str(NETWORKS / f"{name}.yaml")
        assert main(["report", src, "-o", str(path)]) in (0, 1)
        network = netdim.read_network(src)
        # the command evaluates by the method evaluate picks (peaked under alternate routing)
        d = netdim.evaluate(network, method=default_method(network)).to_dict()
        want = [r["id"] for r in d["demands"]] + [r["id"] for r in d["links"]]
        want += [f"{100 * r['utilisation']:.1f}" for r in d["links"]]
        out.append((f"report {name}", str(path), {"fig-map", "fig-curves"}, want))
    # a day evaluation (issue 20): occupancy over the day per link beside the other pictures
    day = tmp_path / "cli-campus-day.html"
    src = str(NETWORKS.parent / "examples" / "campus_day.yaml")
    assert main(["evaluate", src, "--quiet", "--report", str(day), "--kind", "parking"]) in (0, 1)
    d = netdim.evaluate(netdim.read_network(src)).to_dict()
    want = [r["id"] for r in d["demands"]] + [r["id"] for r in d["links"]]
    want += ["Occupancy over the day", "Blocking over the day, per demand"]
    want += [f"{r['lost_fraction']:.4f}" for r in d["demands"] if r["lost_fraction"] >= 1e-4]
    out.append(("evaluate campus day", str(day), {"fig-map", "fig-day-occupancy",
                                                  "fig-curves"}, want))
    path = tmp_path / "cli-size.html"
    assert main(["size", str(NETWORKS / "three-villages.yaml"), "--quiet", "--report",
                 str(path), "--report-targets", "0.01,0.02,0.05"]) == 0
    out.append(("size three-villages", str(path), {"fig-map", "fig-curves", "fig-cost-target"},
                ["ASH-BRY", "BRY-CLV", "ASH-CLV", "How good the plan is",
                 "Cost against target"]))

    # each study's report as its command writes it; the text holds the figures of --json
    villages = str(NETWORKS / "three-villages.yaml")
    for command, extra, fig in (("failures", [], "fig-failures"),
                                ("headroom", [], "fig-headroom"),
                                ("growth", ["--rate", "30%", "--years", "2", "--start",
                                            "installed"], "fig-growth"),
                                ("compare", ["--variants", "mesh", "--no-failures"],
                                 "fig-compare")):
        path = tmp_path / f"study-{command}.html"
        assert main([command, villages, *extra, "--quiet", "--report", str(path)]) in (0, 1)
        out.append((f"{command} three-villages", str(path), {fig}, _study_words(command)))

    charts = [
        chart_section("cost", "Cost against target", figures.cost_against_target(
            [0.005, 0.01, 0.02], [700.0, 600.0, 520.0], current=0.01), "demo"),
        chart_section("failures", "Failures", figures.failure_chart(
            ["AB", "BC"], [0.3, 0.002], target=0.01, missed=[1, 0]), "demo"),
        chart_section("growth", "Growth", figures.growth_chart(
            [2027, 2028], [100.0, 130.0], worst_blocking=[0.004, 0.02], target=0.01), "demo"),
        chart_section("compare", "Comparison", figures.comparison_chart(
            ["mesh", "star"], [500.0, 420.0], worst_blocking=[0.003, 0.02]), "demo"),
    ]
    path = write_report(html_document("Study charts", charts), tmp_path / "charts.html")
    out.append(("study charts", path, {f"fig-{s.id}" for s in charts}, ["Study charts"]))
    return out


def _study_words(command):
    """Strings a study's page must show: its ids and figures formatted as the page does,
    from the study run again through the library (the same figures --json prints)."""
    net = netdim.read_network(NETWORKS / "three-villages.yaml")
    if command == "failures":
        d = failure_study(net).to_dict()
        return [f"link {r['element']}" for r in d["failures"]] + \
            [f"{r['worst_blocking']:.4f}" for r in d["failures"]]
    if command == "headroom":
        d = headroom_study(net).to_dict()
        return [f"{d['multiplier']:.4f}"] + [f"{h['multiplier']:.4f}" for h in d["demands"]]
    if command == "growth":
        d = growth_study(net, rate=0.3, years=2, start="installed").to_dict()
        return [f"year {y['year']}" for y in d["years"]] + [r["id"] for r in d["links"]]
    variant = build_variant(net, parse_variants("mesh")[0])[0]
    d = compare_designs([("three-villages", net), ("mesh", variant)], failures=False).to_dict()
    return [r["name"] for r in d["designs"]] + [f"{r['worst_blocking']:.4f}"
                                                 for r in d["designs"]]


def _drawn(png, box):
    """Share of pixels that are not the white background, and the count of distinct colours,
    inside ``box`` (CSS pixels) of the screenshot."""
    img = Image.open(io.BytesIO(png)).convert("RGB")
    scale = img.width / WIDTH
    x, y, w, h = (int(round(v * scale)) for v in box)
    px = np.asarray(img.crop((x, y, x + w, y + h)), dtype=np.int64).reshape(-1, 3)
    inked = int((px.sum(axis=1) < 3 * 245).sum())
    colours = len(np.unique(px[:, 0] << 16 | px[:, 1] << 8 | px[:, 2]))
    return inked / max(1, len(px)), colours


@pytest.mark.slow  # over 1 s: out of the quick round (issue 13)
def test_reports_render_in_headless_chromium(browser, tmp_path):
    import json

    for name, path, figure_ids, want in _pages(tmp_path):
        html = pathlib.Path(path).read_text(encoding="utf-8")
        assert not re.search(r"https?://", html), name
        url = pathlib.Path(path).resolve().as_uri()
        n_before = len(browser.requests())
        session = browser.open(url, width=WIDTH)
        page = json.loads(browser.evaluate(session, PROBE))
        found = {f["id"] for f in page["figures"]}
        assert found == figure_ids, name
        for f in page["figures"]:
            assert f["w"] > 100 and f["h"] > 100, (name, f)
            assert f["bw"] > 0 and f["bh"] > 0, (name, f)
        missing = [s for s in want if s not in page["text"]]
        assert not missing, (name, missing[:5])
        png = browser.screenshot(session, width=WIDTH)
        (tmp_path / f"{name.replace(' ', '-')}.png").write_bytes(png)
        img = Image.open(io.BytesIO(png))
        assert img.width == WIDTH and img.height >= max(f["y"] + f["h"] for f in page["figures"])
        for f in page["figures"]:
            inked, colours = _drawn(png, (f["x"], f["y"], f["w"], f["h"]))
            assert inked > 0.02 and colours > 8, (name, f["id"], inked, colours)
        asked = browser.requests()[n_before:]
        assert asked and asked[0] == url, (name, asked[:3])
        strays = [u for u in asked if u != url and not u.startswith("data:image/png;base64,")]
        assert not strays, (name, strays)
