"""Copies the first figure of a regimix report (measured vs estimated on the test block) into
docs/images/demo-test-block.svg for the README.
Usage: regimix demo --out /tmp/demo && python3 scripts/readme_figure.py /tmp/demo/report.html"""
import pathlib
import re
import sys

html = pathlib.Path(sys.argv[1]).read_text()
svg = re.search(r"<svg.*?</svg>", html, re.S).group(0)
if "xmlns=" not in svg[:200]:
    svg = svg.replace("<svg", '<svg xmlns="http://www.w3.org/2000/svg"', 1)
out = pathlib.Path(__file__).resolve().parents[1] / "docs/images/demo-test-block.svg"
out.write_text(svg + "\n")
print("wrote", out)
