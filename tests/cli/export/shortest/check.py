# SPDX-License-Identifier: GPL-3.0-or-later (see LICENSE)
"""Every number that export writes reads back exactly and has no more significant digits
than Python's repr() of the same double, which is the shortest string that round-trips
(Python 3.1 and later, after D. M. Gay, "Correctly rounded binary-decimal and
decimal-binary conversions", 1990).  The resistances read back equal the file's (Python's
float() rounds correctly, as strtod does).  Fails (exit 1) with the offending field."""
import csv, json, re, sys

readings, out_csv, out_json = sys.argv[1:4]
bad = []


def digits(s):
    """Significant digits of a decimal string: '0.0025' -> '25', '1e+23' -> '1'."""
    m = s.lower().lstrip("-").split("e")[0].replace(".", "").lstrip("0").rstrip("0")
    return m or "0"


def check(where, text):
    v = float(text)
    if float(repr(v)) != v or len(digits(text)) > len(digits(repr(v))):
        bad.append("%s: %s (repr %s)" % (where, text, repr(v)))
    return v


want = [float(l.split(",")[1]) for l in open(readings) if re.match(r"^-?[0-9]", l)]
rows = list(csv.DictReader(open(out_csv)))
n = 0
for i, row in enumerate(rows):
    for k, text in row.items():
        if re.fullmatch(r"-?[0-9.]+(e[-+]?[0-9]+)?", text or "") and k not in (
                "run", "reading", "line", "fit", "n", "dof"):
            check("csv row %d %s" % (i + 1, k), text)
            n += 1
if [float(r["ohms"]) for r in rows] != want:
    bad.append("csv ohms differ from the file's")

# the JSON: numbers as the parser sees them, read from the text itself
text = open(out_json).read()
for m in re.finditer(r'"(\w+)":(-?[0-9][0-9.eE+-]*)', text):
    if m.group(1) not in ("run", "id", "line", "readings", "excluded", "fits", "n", "dof"):
        check("json " + m.group(1), m.group(2))
        n += 1
doc = json.loads(text)
if [g["ohms"] for g in doc["probes"][0]["runs"][0]["readings"]] != want:
    bad.append("json ohms differ from the file's")
print("%d numbers checked" % n)
for b in bad:
    print("not shortest or not exact: " + b)
sys.exit(1 if bad or n < 40 else 0)
