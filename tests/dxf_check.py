#!/usr/bin/env python3
"""Reads a DXF file with ezdxf (an independent DXF library) and prints what it holds as JSON.

Usage:
    python3 tests/dxf_check.py FILE.dxf...  # per file one line of JSON on stdout
    python3 tests/dxf_check.py --probe      # {"ezdxf": VERSION}, or exit 3 without ezdxf

Exit codes: 0 every file read and audited clean; 1 a file is not a valid DXF or its audit
finds errors (the messages on stderr); 2 usage; 3 ezdxf is not installed.

The JSON of a file: "file"; "dxfversion" ($ACADVER); "insunits" and "measurement"
(header); "audit": the messages of the errors ezdxf's audit finds and of what it repaired
on loading; "layers": name -> ACI colour, line type, on; "linetypes": name -> total length
and elements; "entities": modelspace in file order, each with type, layer, lineweight and
its geometry (LINE start/end, CIRCLE center/radius, LWPOLYLINE points/closed, POINT
location, TEXT text/insert/height); "aci_rgb": ezdxf's default ACI colour table, index
0..255 -> [r, g, b] (null at 0, which is no colour). Coordinates are floats as ezdxf parsed
them, printed by repr, so they round-trip exactly.
"""

import json
import sys


def xy(v):
    return [float(v[0]), float(v[1])]


def pattern(linetype):
    """Total length (group code 40) and elements (49: dash > 0, dot 0, gap < 0)."""
    tags = linetype.pattern_tags.tags
    return {
        "length": next((float(t.value) for t in tags if t.code == 40), 0.0),
        "elements": [float(t.value) for t in tags if t.code == 49],
    }


def entity(e):
    out = {
        "type": e.dxftype(),
        "layer": e.dxf.layer,
        "lineweight": e.dxf.get("lineweight", None),
        "color": e.dxf.get("color", None),
    }
    t = e.dxftype()
    if t == "LINE":
        out["start"] = xy(e.dxf.start)
        out["end"] = xy(e.dxf.end)
    elif t == "CIRCLE":
        out["center"] = xy(e.dxf.center)
        out["radius"] = float(e.dxf.radius)
    elif t == "LWPOLYLINE":
        out["points"] = [[float(x), float(y)] for x, y in e.get_points("xy")]
        out["closed"] = bool(e.closed)
    elif t == "POINT":
        out["location"] = xy(e.dxf.location)
    elif t == "TEXT":
        out["text"] = e.dxf.text
        out["insert"] = xy(e.dxf.insert)
        out["height"] = float(e.dxf.height)
    return out


def main(argv):
    try:
        import ezdxf
        from ezdxf import colors
    except ImportError:
        print("ezdxf is not installed (pip install ezdxf)", file=sys.stderr)
        return 3
    if argv == ["--probe"]:
        print(json.dumps({"ezdxf": ezdxf.__version__}))
        return 0
    if not argv:
        print(__doc__, file=sys.stderr)
        return 2
    status = 0
    for path in argv:
        drawing, ok = read(ezdxf, colors, path)
        if drawing is None:
            return 1
        print(json.dumps(drawing))
        if not ok:
            status = 1
    return status


def read(ezdxf, colors, path):
    """The drawing at `path` as a dict and whether its audit is clean; None if unreadable."""
    try:
        doc = ezdxf.readfile(path)
    except (IOError, ezdxf.DXFStructureError) as err:
        print(f"cannot read {path}: {err}", file=sys.stderr)
        return None, False
    auditor = doc.audit()
    for err in auditor.errors:
        print(f"{path}: audit error: {err.message}", file=sys.stderr)
    msp = doc.modelspace()
    aci_rgb = [None]
    for i in range(1, 256):
        aci_rgb.append(list(colors.aci2rgb(i)))
    out = {
        "file": path,
        "ezdxf": ezdxf.__version__,
        "dxfversion": doc.dxfversion,
        "insunits": doc.header.get("$INSUNITS", None),
        "measurement": doc.header.get("$MEASUREMENT", None),
        "audit": {
            "errors": [e.message for e in auditor.errors],
            "fixes": [f.message for f in auditor.fixes],
        },
        "layers": {
            layer.dxf.name: {
                "color": layer.color,
                "linetype": layer.dxf.linetype,
                "on": layer.is_on(),
            }
            for layer in doc.layers
        },
        "linetypes": {lt.dxf.name: pattern(lt) for lt in doc.linetypes},
        "entities": [entity(e) for e in msp],
        "aci_rgb": aci_rgb,
    }
    return out, not auditor.has_errors


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
