"""Checks SVG documents are well-formed XML and reports their size.

Usage: svg_check.py FILE.svg...
Prints [{"width": w, "height": h, "root": tag}] per file, parsed with the
Python standard library's xml.etree.ElementTree (a conforming XML parser).
"""
import json
import sys
import xml.etree.ElementTree as ET

out = []
for path in sys.argv[1:]:
    root = ET.parse(path).getroot()
    out.append({"root": root.tag, "width": root.get("width"), "height": root.get("height")})
print(json.dumps(out))
