#!/usr/bin/python3
"""hrtrail plot: well-formed SVG (xmllint), rendered by rsvg-convert to a non-blank PNG, and a star's marker
at the pixel its (log Teff, log L) maps to on the drawn axes; with --y abs_mv or mv, at its V magnitude as
'hrtrail at' writes it."""
import csv
import io
import math
import os
import subprocess
import xml.etree.ElementTree as ET

from clitest import EXIT_FILE, EXIT_OK, Checks, Lib, make_grid, read_png, run, tmpdir

SVG = "{http://www.w3.org/2000/svg}"
t = Checks("cli-plot")
d = tmpdir()
grid = make_grid(d)
G = ["--grid", grid]
lib = Lib()
g = lib.open(grid)


def well_formed_and_rendered(path, what):
    x = subprocess.run(["xmllint", "--noout", path], capture_output=True, text=True)
    t.eq((x.returncode, x.stderr), (0, ""), what + ": xmllint finds it well-formed")
    png = path[:-4] + ".png"
    r = subprocess.run(["rsvg-convert", "-o", png, path], capture_output=True, text=True)
    t.eq(r.returncode, 0, what + ": rsvg-convert renders it (%s)" % r.stderr)
    w, h, rows = read_png(png)
    colours = {px[:3] for row in rows[::4] for px in row[::4]}
    bg = rows[2][2][:3]
    inked = sum(1 for row in rows for px in row if abs(px[0] - bg[0]) + abs(px[1] - bg[1]) + abs(px[2] - bg[2]) > 60)
    t.ok(len(colours) > 10 and inked > 2000, what + ": the PNG is not blank (%d colours, %d inked px)" % (len(colours), inked))
    return w, h, rows


def axis_map(root, axis, coord):
    """Linear map value -> pixel from the labelled ticks of an axis."""
    ticks = [(float(e.get("data-value")), float(e.get(coord))) for e in root.iter(SVG + "line")
             if e.get("class") == "tick" and e in list(root.find(".//%sg[@id='%s']" % (SVG, axis)))]
    (v0, p0), (v1, p1) = ticks[0], ticks[-1]
    return ticks, lambda v: p0 + (v - v0) * (p1 - p0) / (v1 - v0)


# ---- two known stars as points: marker position from the axes, checked in the rendered pixels
rc, csvtext, err = run(["at"] + G + ["--mass", "1,2.4", "--z", "0.014", "--age", "500Myr", "--csv"])
svg = os.path.join(d, "points.svg")
rc, out, err = run(["plot", "--points", "-", "-o", svg, "--title", "Two stars of an invented survey"],
                   stdin=csvtext)
t.eq((rc, out, err), (EXIT_OK, "", ""), "plot --points - -o FILE: exit code, quiet")
root = ET.parse(svg).getroot()
xt, xmap = axis_map(root, "x-axis", "x1")
yt, ymap = axis_map(root, "y-axis", "y1")
t.ok(len(xt) >= 3 and len(yt) >= 2, "labelled ticks on both axes")
t.ok(all(b[1] < a[1] for a, b in zip(xt, xt[1:])), "log Teff increases to the left")
t.ok(all(b[1] < a[1] for a, b in zip(yt, yt[1:])), "log L increases upward")
area = root.find(".//%srect[@id='plot-area']" % SVG)
lo, hi = float(area.get("data-log-l-bottom")), float(area.get("data-log-l-top"))
decades = [float(k) for k in range(int(lo) - 1, int(hi) + 2) if lo <= k <= hi]
t.ok(decades and all(k in [v for v, _ in yt] for k in decades), "a labelled tick at every decade of L: %r" % yt)
texts = [e.text or "" for e in root.iter(SVG + "text")]
t.ok("Two stars of an invented survey" in texts, "title drawn")
t.ok(any("Teff / K" in s for s in texts) and any("L / Lsun" in s for s in texts), "axis labels with units")
states = g.eval([1.0, 2.4], [0.014, 0.014], [5e8, 5e8])
w, h, rows = well_formed_and_rendered(svg, "points plot")
circles = [e for e in root.iter(SVG + "circle") if e.get("class") == "point"]
t.eq(len(circles), 2, "one marker per star")
for st, c in zip(states, circles):
    ex, ey = xmap(st.log_teff_k), ymap(st.log_l_lsun)
    t.ok(abs(float(c.get("cx")) - ex) < 0.01 and abs(float(c.get("cy")) - ey) < 0.01,
         "marker of %g Msun drawn at (%.2f, %.2f), axes say (%.2f, %.2f)" % (
             st.initial_mass_msun, float(c.get("cx")), float(c.get("cy")), ex, ey))
    # dark marker pixels near the expected place: their centroid is the expected pixel
    dark = [(x, y) for y in range(max(0, int(ey) - 20), min(h, int(ey) + 21))
            for x in range(max(0, int(ex) - 20), min(w, int(ex) + 21))
            if max(rows[y][x][:3]) < 35]
    t.ok(len(dark) > 20, "marker of %g Msun is dark in the PNG (%d px)" % (st.initial_mass_msun, len(dark)))
    if dark:
        cx = sum(p[0] for p in dark) / len(dark) + 0.5
        cy = sum(p[1] for p in dark) / len(dark) + 0.5
        t.ok(abs(cx - ex) < 1.0 and abs(cy - ey) < 1.0,
             "rendered marker of %g Msun centred at (%.2f, %.2f), axes say (%.2f, %.2f)" % (
                 st.initial_mass_msun, cx, cy, ex, ey))

# ---- points from a file of the columns --points reads, and the old spellings refused
pts = os.path.join(d, "pts.svg")
rc, out, err = run(["plot", "--points", "-", "-o", pts],
                   stdin="name,log_teff_k,log_l_lsun,phase\nA,3.76,0.1,ms\nB,3.65,1.9,rgb\n")
t.eq((rc, err), (EXIT_OK, ""), "plot --points with log_teff_k, log_l_lsun, name, phase")
circles = [e for e in ET.parse(pts).getroot().iter(SVG + "circle") if e.get("class") == "point"]
t.eq([float(c.get("data-log-teff")) for c in circles], [3.76, 3.65], "both points drawn")
for head in ("log_Teff_K,log_L_Lsun", "log_teff,log_l", "label,log_teff_k,log_l_lsun"):
    rc, out, err = run(["plot", "--points", "-", "-o", pts], stdin=head + "\n" + ",".join(["1"] * (head.count(",") + 1)) + "\n")
    t.ok(rc == EXIT_FILE and out == "" and "log_teff_k" in err and "log_l_lsun" in err,
         "plot --points with old columns %s: exit %d, message naming the columns: %r" % (head, rc, err))

# ---- tracks and isochrones: phases told apart by dash pattern and marker, named in the legend
svg2 = os.path.join(d, "hr.svg")
rc, out, err = run(["plot"] + G + ["--track", "1,2.4,12", "--isochrone", "100Myr,1Gyr", "--z", "0.02", "-o", svg2])
t.eq(rc, EXIT_OK, "plot of tracks and isochrones: exit code (%s)" % err)
well_formed_and_rendered(svg2, "tracks+isochrones plot")
root = ET.parse(svg2).getroot()
legend = list(root.find(".//%sg[@id='legend']" % SVG))
entries = []
for i, e in enumerate(legend):
    if e.get("class") == "legend-phase":
        mark = legend[i + 1]
        entries.append((e.get("data-phase"), e.get("stroke-dasharray") or "solid",
                        mark.tag + ":" + (mark.get("fill") == "#ffffff" and "open" or "filled") + ":" +
                        str(len(mark.get("d") or ""))))
phases_drawn = set()
for grp in root.iter(SVG + "g"):
    if grp.get("class") in ("track", "isochrone"):
        for pl in grp.iter(SVG + "polyline"):
            phases_drawn.add((pl.get("stroke"), pl.get("stroke-dasharray") or "solid"))
t.ok(len(entries) >= 6, "legend names the phases drawn (%d)" % len(entries))
t.eq(len({(dash, mark) for _, dash, mark in entries}), len(entries),
     "each phase has its own dash pattern/marker pair, readable in greyscale")
names = [e.text for e in root.find(".//%sg[@id='legend']" % SVG).iter(SVG + "text")]
t.ok("main sequence" in names and "red giant branch" in names, "legend uses the phase names")
t.ok(any(x in names for x in ("track (initial mass)",)) and "isochrone (age)" in names, "legend tells tracks from isochrones")
t.eq(len([x for x in root.iter(SVG + "g") if x.get("class") == "track"]), 3, "three tracks")
t.eq(len([x for x in root.iter(SVG + "g") if x.get("class") == "isochrone"]), 2, "two isochrones")
labels = [e.text for e in root.iter(SVG + "text") if e.get("class") == "label"]
t.ok("1 Msun" in labels and "1 Gyr" in labels, "tracks and isochrones labelled: %r" % labels)
# to standard output, the same SVG
rc, out, err = run(["plot"] + G + ["--track", "1,2.4,12", "--isochrone", "100Myr,1Gyr", "--z", "0.02"])
with open(svg2) as f:
    t.eq(out, f.read(), "without -o the SVG goes to standard output")
# explicit ranges are honoured
svg3 = os.path.join(d, "range.svg")
run(["plot"] + G + ["--track", "1", "--log-teff", "3.5,4.2", "--log-l", "-1,3", "-o", svg3])
area = ET.parse(svg3).getroot().find(".//%srect[@id='plot-area']" % SVG)
t.eq((float(area.get("data-log-teff-left")), float(area.get("data-log-teff-right")),
      float(area.get("data-log-l-bottom")), float(area.get("data-log-l-top"))), (4.2, 3.5, -1.0, 3.0),
     "--log-teff/--log-l set the axes")
# ---- a magnitude-temperature diagram: the points' V magnitudes are those 'hrtrail at' writes,
# drawn where the axes say, brighter upward; remnants and misuse refused or left out
rc, csvtext, err = run(["at"] + G + ["--mass", "0.8,1,2.4,7", "--z", "0.014", "--age", "300Myr", "--csv",
                                     "--distance", "320", "--av", "0.3"])
rows_at = list(csv.DictReader(io.StringIO(csvtext)))
t.eq((rc, len(rows_at)), (EXIT_OK, 4), "at --distance --av: four stars (%s)" % err)
t.ok(all(abs(float(r["mv"]) - float(r["abs_mv"]) - (5 * math.log10(32.0) + 0.3)) < 1e-9 for r in rows_at
         if r["mv"] not in ("", "nan")), "at: mv = abs_mv + 5 log10(d / 10 pc) + A_V")
for yk, extra, col in (("abs_mv", [], "abs_mv"), ("mv", ["--distance", "320", "--av", "0.3"], "mv")):
    msvg = os.path.join(d, "mags-%s.svg" % yk)
    rc, out, err = run(["plot", "--points", "-", "--y", yk, "-o", msvg] + extra, stdin=csvtext)
    t.eq((rc, err), (EXIT_OK, ""), "plot --y %s: exit code" % yk)
    root = ET.parse(msvg).getroot()
    yt, ymap = axis_map(root, "y-axis", "y1")
    t.ok(all(b[1] > a[1] for a, b in zip(yt, yt[1:])), "--y %s: magnitudes grow downward %r" % (yk, yt))
    circles = [e for e in root.iter(SVG + "circle") if e.get("class") == "point"]
    want = [float(r[col]) for r in rows_at if r["phase"] not in ("wd", "ns", "bh") and r[col] not in ("", "nan")]
    got = [float(c.get("data-" + yk.replace("_", "-"))) for c in circles]
    t.ok(len(got) == len(want) and all(abs(a - b) < 1e-12 for a, b in zip(got, want)),
         "--y %s: the points are the stars' %s as 'at' writes them (remnants left out): %r vs %r" % (yk, col, got, want))
    t.ok(all(abs(float(c.get("cy")) - ymap(v)) < 0.01 for c, v in zip(circles, got)), "--y %s: markers where the axis says" % yk)
    well_formed_and_rendered(msvg, "plot --y " + yk)
for args, why in ((["--y", "mv"], "--y mv without --distance"), (["--y", "teff"], "an unknown --y"),
                  (["--y", "abs_mv", "--distance", "10"], "--distance with --y abs_mv"),
                  (["--av", "0.3", "--y", "mv"], "--av without --distance")):
    rc, out, err = run(["plot", "--points", "-", "-o", os.path.join(d, "no.svg")] + args, stdin=csvtext)
    t.ok(rc == 2 and out == "" and err.startswith("hrtrail plot:"), "plot %s refused: %d %r" % (why, rc, err))
rc, out, err = run(["at"] + G + ["--mass", "1", "--age", "1Gyr", "--av", "0.2"])
t.ok(rc == 2 and "--distance" in err, "at --av without --distance refused: %r" % err)
rc, out, err = run(["at"] + G + ["--mass", "1", "--age", "1Gyr", "--distance", "-3"])
t.ok(rc == 2 and "--distance" in err, "at --distance -3 refused: %r" % err)

g.close()
t.finish()
