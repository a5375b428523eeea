"""Make the report screenshots in docs/: two bundled networks, opened in headless Chromium.

    python docs/make_screenshots.py

writes docs/report-regional-telephone-evaluate.png (the evaluation of
networks/regional-telephone.yaml at its capacities) and docs/report-campus-parking-plan.png
(a sized plan for networks/campus-parking.yaml), and the two HTML reports beside them in
docs/ as .html. Needs the report extra (``pip install -e ".[report]"``) and Debian's chromium.
"""

from __future__ import annotations

import pathlib
import sys
import tempfile

HERE = pathlib.Path(__file__).resolve().parent
ROOT = HERE.parent
sys.path.insert(0, str(ROOT / "tests"))

from _chromium import Chromium, find_chromium  # noqa: E402

import netdim  # noqa: E402
from netdim.report.html import evaluation_html, plan_html, write_report  # noqa: E402

WIDTH = 1400


def main() -> int:
    binary = find_chromium()
    if binary is None:
        print("make_screenshots: chromium is not installed (apt-get install chromium)",
              file=sys.stderr)
        return 2
    tele = netdim.read_network(ROOT / "networks" / "regional-telephone.yaml")
    park = netdim.read_network(ROOT / "networks" / "campus-parking.yaml")
    reports = {
        "report-regional-telephone-evaluate": evaluation_html(
            tele, netdim.evaluate(tele), kind="telephone",
            source="networks/regional-telephone.yaml"),
        "report-campus-parking-plan": plan_html(
            netdim.dimension(park), kind="parking", source="networks/campus-parking.yaml"),
    }
    with tempfile.TemporaryDirectory() as profile, Chromium(binary, profile) as browser:
        for name, html in reports.items():
            path = write_report(html, HERE / f"{name}.html")
            session = browser.open(pathlib.Path(path).as_uri(), width=WIDTH)
            (HERE / f"{name}.png").write_bytes(browser.screenshot(session, width=WIDTH))
            print(f"wrote docs/{name}.png and docs/{name}.html")
    return 0


if __name__ == "__main__":
    sys.exit(main())
