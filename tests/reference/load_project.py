#!/usr/bin/env python3
"""Builds a large project from the invented demo (demo_projects/tarn_moss), for measuring how
`consolute run` holds up under load by hand:

    python3 tests/reference/load_project.py 50 5 /tmp/load50x5
    /usr/bin/time -v target/release/consolute run /tmp/load50x5/project.json --out /tmp/out50x5

GRAINS feldspar grains in one sample, each with MICROGRAPHS micrographs. The micrographs cycle
through the demo's feldspar micrographs (each with its own region and segmentation settings,
referenced by absolute path, not copied); every grain gets the spot analyses of the demo grain
TM-01 / g1 under its own sample, grain and spot ids. Standard library only.
"""
import copy
import csv
import json
import os
import sys

DEMO = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..", "demo_projects", "tarn_moss")


def main(grains, micrographs, out_dir):
    demo = os.path.normpath(DEMO)
    with open(os.path.join(demo, "project.json"), encoding="utf-8") as f:
        project = json.load(f)
    feldspar = [g for s in project["samples"] for g in s["grains"] if g["system"] == "feldspar"]
    sources = [m for g in feldspar for m in g["micrographs"]]
    template = next(g for g in project["samples"][0]["grains"] if g["id"] == "g1")

    with open(os.path.join(demo, "analyses.csv"), newline="", encoding="utf-8") as f:
        rows = list(csv.reader(f))
    header, body = rows[0], rows[1:]
    spots = [r for r in body if r[0] == project["samples"][0]["id"] and r[1] == "g1"]

    os.makedirs(out_dir, exist_ok=True)
    new_grains, new_rows = [], []
    for i in range(grains):
        gid = "g%03d" % (i + 1)
        grain = copy.deepcopy(template)
        grain["id"] = gid
        grain["micrographs"] = []
        for k in range(micrographs):
            m = copy.deepcopy(sources[(i * micrographs + k) % len(sources)])
            m["label"] = "bse-%d" % (k + 1)
            m["path"] = os.path.join(demo, m["path"])
            grain["micrographs"].append(m)
        new_grains.append(grain)
        for r in spots:
            new_rows.append(["LOAD", gid] + [r[2], "%s-%s" % (gid, r[3])] + r[4:])

    project["name"] = "load test: %d grains x %d micrographs (from the invented demo)" % (grains, micrographs)
    project["analysis_files"] = [{"path": "analyses.csv", "system": "feldspar"}]
    project["samples"] = [{
        "id": "LOAD",
        "description": "copies of the demo's feldspar grains, for a load test",
        "grains": new_grains,
    } | {k: v for k, v in project["samples"][0].items() if k not in ("id", "description", "grains")}]
    with open(os.path.join(out_dir, "project.json"), "w", encoding="utf-8") as f:
        json.dump(project, f, indent=1)
    with open(os.path.join(out_dir, "analyses.csv"), "w", newline="", encoding="utf-8") as f:
        csv.writer(f).writerows([header] + new_rows)


if __name__ == "__main__":
    if len(sys.argv) != 4:
        sys.exit("usage: load_project.py GRAINS MICROGRAPHS OUT_DIR")
    main(int(sys.argv[1]), int(sys.argv[2]), sys.argv[3])
