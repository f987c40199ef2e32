#!/usr/bin/python3
"""Checks the sample page of every chart kind that chart_sample wrote.

  check_charts.py DIR

Parses DIR/sample.html and every DIR/*.svg with Python's xml.etree (so the
charts are well-formed XML by a parser other than the unit tests' expat) and
checks, for each chart: the <svg> root with its id, role="img", a <title> and
a <desc> named by aria-labelledby, ids unique across the whole page, no
"nan"/"inf" anywhere, every numeric data- attribute a finite number, and
nothing the page would load from elsewhere (no href, src, url() other than
the chart's own patterns, no script or style sheet).
"""
import glob
import math
import os
import re
import sys
import xml.etree.ElementTree as ET

SVG = "{http://www.w3.org/2000/svg}"
XHTML = "{http://www.w3.org/1999/xhtml}"
EXPECTED = [
    "holdout-reliability", "holdout-roc", "score-histogram",
    "building-type-histogram", "feature-stability", "log-loss-history",
    "psi-history", "empty-reliability", "single-point-history",
    "hostile-names", "empty-roc",
]
# data- attributes that hold one number, or a space-separated list of them.
NUMERIC = {"data-lower", "data-upper", "data-count", "data-mean-predicted",
           "data-observed-rate", "data-window", "data-baseline", "data-psi",
           "data-rank", "data-value", "data-auc", "data-bin",
           "data-series-index"}
LISTS = {"data-fpr", "data-tpr"}
NON_FINITE = re.compile(r"(^|[^A-Za-z])-?(nan|inf|infinity)([^A-Za-z]|$)",
                        re.IGNORECASE)
FAILURES = []


def fail(where, what):
    FAILURES.append(f"{where}: {what}")


def check_chart(svg, where):
    chart_id = svg.get("id")
    if not chart_id:
        fail(where, "<svg> without id")
        return
    where = f"{where} #{chart_id}"
    if svg.get("role") != "img":
        fail(where, "role is not img")
    title = svg.find(SVG + "title")
    desc = svg.find(SVG + "desc")
    if title is None or desc is None or not (desc.text or "").strip():
        fail(where, "missing <title> or <desc>")
    elif svg.get("aria-labelledby") != f"{title.get('id')} {desc.get('id')}":
        fail(where, "aria-labelledby does not name the title and desc")
    for e in svg.iter():
        tag = e.tag.split("}")[-1]
        if tag in ("script", "image", "foreignObject", "style", "use", "a"):
            fail(where, f"<{tag}> element")
        for key, value in e.attrib.items():
            if key.endswith("href") or key == "src" or key.startswith("on"):
                fail(where, f"attribute {key}")
            if "url(" in value and not value.startswith(f"url(#{chart_id}-"):
                fail(where, f"{key}={value!r} points outside the chart")
            if key in NUMERIC or key in LISTS:
                parts = value.split(" ") if key in LISTS else [value]
                for part in parts:
                    try:
                        number = float(part)
                    except ValueError:
                        fail(where, f"{key}={value!r} is not a number")
                        continue
                    if not math.isfinite(number):
                        fail(where, f"{key}={value!r} is not finite")
    text = ET.tostring(svg, encoding="unicode")
    if NON_FINITE.search(text):
        fail(where, "contains nan or inf: "
             + NON_FINITE.search(text).group(0))


def main():
    directory = sys.argv[1]
    page_path = os.path.join(directory, "sample.html")
    page = ET.parse(page_path).getroot()
    charts = list(page.iter(SVG + "svg"))
    ids = [c.get("id") for c in charts]
    if ids != EXPECTED:
        fail(page_path, f"charts {ids}, expected {EXPECTED}")
    seen = set()
    for e in page.iter():
        i = e.get("id")
        if i is not None:
            if i in seen:
                fail(page_path, f"duplicate id {i}")
            seen.add(i)
        for key in e.attrib:
            if key.endswith("href") or key == "src":
                fail(page_path, f"<{e.tag}> loads {e.attrib[key]}")
    for chart in charts:
        check_chart(chart, page_path)
    files = sorted(glob.glob(os.path.join(directory, "*.svg")))
    if len(files) != len(EXPECTED):
        fail(directory, f"{len(files)} .svg files, expected {len(EXPECTED)}")
    for path in files:
        check_chart(ET.parse(path).getroot(), path)
    if FAILURES:
        print("\n".join(FAILURES))
        return 1
    print(f"{len(charts)} charts in the page and {len(files)} files: "
          "well-formed, labelled, self-contained")
    return 0


if __name__ == "__main__":
    sys.exit(main())
