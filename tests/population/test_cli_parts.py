#!/usr/bin/python3
"""hrtrail population as a batch job array: parts run with --part / --chunks and --save-summary,
merged in shuffled order by 'hrtrail population merge', give the same CSV, JSON, SVG and text
tables as one run; overlapping, incomplete, mismatched and damaged parts are refused.

test_cli_parts.py HRTRAIL_EXE GRID
"""
import os
import random
import re
import subprocess
import sys
import tempfile

exe, grid = os.path.abspath(sys.argv[1]), os.path.abspath(sys.argv[2])
env = dict(os.environ, HRTRAIL_GRID=grid)
failed = 0


def check(ok, what):
    global failed
    print(("ok: " if ok else "FAIL: ") + what)
    failed += not ok


def run(args):
    p = subprocess.run([exe] + args, capture_output=True, text=True, env=env, cwd=d, timeout=600)
    return p.returncode, p.stdout, p.stderr


def read(name):
    with open(os.path.join(d, name), "rb") as f:
        return f.read()


def untimed(text):
    """The text report without its one line of timing (threads, seconds), which no two runs share."""
    return re.sub(r"(?m)^seed \d+;.*\n", "", text)


d = tempfile.mkdtemp()
scenarios = {
    "burst": ["--stars", "60000", "--age", "2Gyr,9Gyr"],
    "constant": ["--stars", "60000", "--sfh", "constant", "--sfh-from", "0", "--sfh-to", "10Gyr", "--age", "10Gyr"],
    "feh-spread": ["--stars", "60000", "--feh-spread", "0.3", "--age", "5Gyr"],
}
rng = random.Random(2026)  # shuffles the merge order; any order must give the same bytes
for name, spec in scenarios.items():
    base = ["population"] + spec + ["--seed", "31", "--chunk-size", "8000"]  # 8 chunks
    whole = {}
    fmts = ("--csv", "--json", "") if name == "burst" else ("--csv",)  # every format once, CSV for each scenario
    for fmt in fmts:
        rc, out, err = run(base + ([fmt] if fmt else []) + ["-o", "whole.svg"])
        check(rc == 0, "%s %s: single run exit 0 %s" % (name, fmt or "text", err[:200]))
        whole[fmt] = out
    whole_svg = read("whole.svg")
    # the parts of a job array: --part K/4 (K/2 for the other scenarios, to save time)
    parts = []
    n_parts = 4 if name == "burst" else 2
    for k in range(n_parts):
        f = "%s-%d.part" % (name, k)
        rc, out, err = run(base + ["--part", "%d/%d" % (k, n_parts), "--save-summary", f] +
                           (["--threads", "1"] if k % 2 else []))
        check(rc == 0 and "saved to" in out, "%s: part %d/%d saved (%s)" % (name, k, n_parts, (out + err).strip()[:200]))
        parts.append(f)
    rng.shuffle(parts)
    for fmt in fmts:
        rc, out, err = run(["population", "merge"] + parts + ([fmt] if fmt else []) + ["-o", "merged.svg"])
        check(rc == 0, "%s %s: merge of %s exit 0 %s" % (name, fmt or "text", " ".join(parts), err[:200]))
        out = out.replace("merged.svg", "whole.svg")  # the -o name is in the JSON and text
        if fmt:
            check(out == whole[fmt], "%s %s: merged output byte-identical to the single run" % (name, fmt))
        else:
            check(untimed(out) == untimed(whole[fmt]) and "merged from %d saved parts" % n_parts in out,
                  "%s text: merged tables identical to the single run's (but the timing line)" % name)
    check(read("merged.svg") == whole_svg, "%s: merged SVG byte-identical to the single run's" % name)
    if name == "burst":
        burst_csv = whole["--csv"]

    # --chunks, and a merge of merges (a subset merged with --save-summary, then the rest)
    if name != "burst":
        continue
    a, b, b2 = name + "-a.part", name + "-b.part", name + "-b2.part"
    rc, _, err = run(base + ["--chunks", "0:2", "--save-summary", a])
    rc2, _, err2 = run(base + ["--chunks", "2:100", "--save-summary", b])  # COUNT past the end is clipped
    rc3, _, err3 = run(["population", "merge", b, "--save-summary", b2])
    rc4, out, err4 = run(["population", "merge", b2, a, "--csv"])
    check(rc == rc2 == rc3 == rc4 == 0 and out == whole["--csv"],
          "%s: --chunks 0:5 and 5:100, one re-saved by merge, merge to the single run's CSV %s" %
          (name, (err + err2 + err3 + err4)[:300]))

# refusals, each with its message
base = ["population"] + scenarios["burst"] + ["--seed", "31", "--chunk-size", "8000"]
rc, out, err = run(["population", "merge", "burst-0.part", "burst-1.part"])
check(rc == 2 and "missing: " in err, "an incomplete set of parts is refused, naming the missing chunks: %r" % err)
rc, out, err = run(["population", "merge", "burst-0.part", "burst-1.part", "burst-2.part", "burst-3.part", "burst-a.part"])
check(rc == 2 and "are in both parts" in err, "overlapping parts are refused: %r" % err)
rc, out, err = run(["population", "merge", "burst-0.part", "constant-1.part"])
check(rc == 2 and "different populations" in err, "parts of another population are refused: %r" % err)
rc, _, _ = run(base[:-4] + ["--seed", "32", "--chunk-size", "8000", "--part", "1/4", "--save-summary", "seed32.part"])
rc, out, err = run(["population", "merge", "burst-0.part", "seed32.part", "burst-2.part", "burst-3.part"])
check(rc == 2 and "their seed differs" in err, "parts of another seed are refused, naming the seed: %r" % err)
rc, _, _ = run(base + ["--part", "1/4", "--interp", "linear", "--save-summary", "linear.part"])
rc, out, err = run(["population", "merge", "burst-0.part", "linear.part", "burst-2.part", "burst-3.part"])
check(rc == 2 and "different notes" in err and "interp linear" in err,
      "a part evaluated with another interpolation is refused: %r" % err)
# more parts than chunks: some parts are empty, and merge all the same
rc, out, err = run(base + ["--part", "0/10", "--save-summary", "empty.part"])  # floor(8 * 1 / 10) = 0 chunks
check(rc == 0 and "No chunk in this part" in out, "--part 0/10 of 8 chunks saves an empty part: %r" % (out + err))
rc, out, err = run(["population", "merge", "empty.part", "burst-0.part", "burst-1.part", "burst-2.part",
                    "burst-3.part", "--csv"])
check(rc == 0 and out == burst_csv, "an empty part merges without changing the result %s" % err[:200])
rc, out, err = run(base + ["--part", "1/4"])
check(rc == 2 and "--save-summary" in err, "--part without --save-summary is refused: %r" % err)
rc, out, err = run(base + ["--chunks", "8:1", "--save-summary", "x.part"])
check(rc == 2 and "has 8 chunks" in err, "--chunks past the last chunk is refused: %r" % err)
blob = bytearray(read("burst-0.part"))
blob[len(blob) // 2] ^= 1
with open(os.path.join(d, "bad.part"), "wb") as f:
    f.write(blob)
rc, out, err = run(["population", "merge", "bad.part", "burst-1.part", "burst-2.part", "burst-3.part"])
check(rc == 4 and "checksum" in err, "a damaged part is refused by its checksum: %r" % err)
with open(os.path.join(d, "short.part"), "wb") as f:
    f.write(read("burst-0.part")[:-100])
rc, out, err = run(["population", "merge", "short.part"])
check(rc == 4 and "truncated" in err, "a truncated part is refused: %r" % err)
rc, out, err = run(["population", "merge", "whole.svg"])
check(rc == 4 and "not a saved population part" in err, "another file is refused: %r" % err)

print("cli-population-parts: %s" % ("all passed" if not failed else "%d failures" % failed))
sys.exit(1 if failed else 0)
