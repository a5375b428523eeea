"""Make the report screenshots in docs/: two bundled networks, opened in headless Chromium.

    python docs/make_screenshots.py

writes docs/report-regional-telephone-evaluate.png (``netdim report
networks/regional-telephone.yaml --kind telephone``: the evaluation at its capacities) and
docs/report-campus-parking-plan.png (``netdim size networks/campus-parking.yaml --report
... --kind parking``: a sized plan), and the two HTML reports beside them in docs/ as
.html, made by the commands themselves. Needs the report extra
(``pip install -e ".[report]"``) and Debian's chromium.
"""

from __future__ import annotations

import os
import pathlib
import sys
import tempfile

HERE = pathlib.Path(__file__).resolve().parent
ROOT = HERE.parent
sys.path.insert(0, str(ROOT / "tests"))

from _chromium import Chromium, find_chromium  # noqa: E402

from netdim.cli import main as netdim_main  # noqa: E402

WIDTH = 1400


def main() -> int:
    binary = find_chromium()
    if binary is None:
        print("make_screenshots: chromium is not installed (apt-get install chromium)",
              file=sys.stderr)
        return 2
    os.chdir(ROOT)  # so the page names the network file as typed at the top of the tree
    commands = {
        "report-regional-telephone-evaluate": [
            "report", "networks/regional-telephone.yaml", "--kind", "telephone", "-o"],
        "report-campus-parking-plan": [
            "size", "networks/campus-parking.yaml", "--kind", "parking", "--quiet",
            "--report"],
    }
    with tempfile.TemporaryDirectory() as profile, Chromium(binary, profile) as browser:
        for name, argv in commands.items():
            path = HERE / f"{name}.html"
            status = netdim_main(argv + [str(path.relative_to(ROOT))])
            if status not in (0, 1):
                print(f"make_screenshots: netdim {' '.join(argv)} failed", file=sys.stderr)
                return 2
            session = browser.open(pathlib.Path(path).as_uri(), width=WIDTH)
            (HERE / f"{name}.png").write_bytes(browser.screenshot(session, width=WIDTH))
            print(f"wrote docs/{name}.png and docs/{name}.html")
    return 0


if __name__ == "__main__":
    sys.exit(main())
