#!/usr/bin/python3
"""hrtrail --help, --version and every subcommand's --help: what a new user reads."""
import re

from clitest import EXIT_OK, EXIT_USAGE, Checks, run

t = Checks("cli-help")

rc, out, err = run(["--version"])
t.eq(rc, EXIT_OK, "--version exit code")
t.ok(re.match(r"^hrtrail \d+\.\d+\.\d+ \(library \d+\.\d+\.\d+, ABI \d+, grid format \d+\)\n$", out),
     "--version line: %r" % out)

rc, out, err = run(["--help"])
t.eq(rc, EXIT_OK, "--help exit code")
for cmd in ("at", "track", "isochrone", "life", "plot", "grid", "demo"):
    t.ok(re.search(r"^  %s\s" % cmd, out, re.M), "--help lists the command %s" % cmd)
for word in ("--grid FILE", "--interp", "steffen", "linear", "cspline", "akima", "--csv", "--json", "--feh",
             "Msun", "800Myr", "4.6Gyr", "1e9", "Exit status", "HRTRAIL_GRID", "semi-analytic"):
    t.ok(word in out, "--help mentions %r" % word)
# every exit code is documented
for code in range(5):
    t.ok(re.search(r"^\s+%d\s+\S" % code, out, re.M), "--help documents exit code %d" % code)
t.eq(err, "", "--help writes nothing on stderr")

# the questions of a new user, answered by an example in the help of the right command
examples = {
    "at": ["--mass 2.3 --z 0.008 --age 800Myr", "--input", "--keep-going", "--interp-error"],
    "track": ["--steps", "--ages", "--eeps", "--from", "--to", "--interp-error"],
    "isochrone": ["--age 1Gyr", "--csv", "--interp-error"],
    "life": ["keypoint", "remnant", "route", "duration"],
    "plot": ["--track", "--isochrone", "--points", "--title", "-o", "greyscale", "to the left"],
    "grid": ["info", "check", "upgrade OLD NEW", "progress", "validator", "--store"],
    "demo": ["invented", "turnoff", "-o"],
}
for cmd, words in examples.items():
    rc, out, err = run([cmd, "--help"])
    t.eq(rc, EXIT_OK, "%s --help exit code" % cmd)
    t.ok(out.startswith("Usage: hrtrail " + cmd), "%s --help starts with its usage line" % cmd)
    t.ok("Exit status" in out, "%s --help documents the exit codes" % cmd)
    for w in words:
        t.ok(w in out, "%s --help mentions %r" % (cmd, w))
    rc2, out2, _ = run(["help", cmd])
    t.eq((rc2, out2), (rc, out), "'hrtrail help %s' is '%s --help'" % (cmd, cmd))
# -h is --help; help comes before any grid is needed (no grid named here)
rc, out, err = run(["at", "-h"], env={"HRTRAIL_GRID": "/nonexistent/grid.h5"})
t.eq(rc, EXIT_OK, "at -h works without a grid")
t.ok("Columns of a state" in out and "log_teff_k" in out and "initial_mass_msun" in out,
     "at --help explains the columns")
for cmd in ("grid info", "grid check", "grid accuracy", "grid upgrade"):
    rc, out, err = run(cmd.split() + ["--help"])
    t.ok(rc == EXIT_OK and out.startswith("Usage: hrtrail grid"), "%s --help" % cmd)

# the man page documents the same commands, options and exit codes
import os  # noqa: E402
man = open(os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..", "bindings", "cli", "hrtrail.1")).read()
for cmd in ("at", "track", "isochrone", "life", "plot", "grid info", "grid check", "grid accuracy", "grid upgrade", "demo"):
    t.ok(".B %s" % cmd in man, "man page documents %s" % cmd)
for opt in ("grid", "interp", "z", "feh", "csv", "json", "help", "version", "keep\\-going", "steps", "points",
            "interp\\-error", "store"):
    t.ok("\\-\\-" + opt in man, "man page documents --%s" % opt.replace("\\", ""))
for code in range(5):
    t.ok(".B %d\n" % code in man, "man page documents exit code %d" % code)

# help and man page follow the command table of bindings/cli/main.c: every command, no other, in the same
# order in both; and every action of 'grid' in both
src = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..", "bindings", "cli")
table = re.findall(r'\{"([a-z]+)", cmd_[a-z_]+,', open(os.path.join(src, "main.c")).read())
t.ok(len(table) >= 11, "the command table of main.c is read (%r)" % table)
rc, out, err = run(["--help"])
block = out.split("Commands:\n", 1)[1].split("\n\n", 1)[0]
listed = re.findall(r"^  ([a-z]+) ", block, re.M)
section = man.split(".SH COMMANDS", 1)[1].split(".SH OPTIONS", 1)[0]
man_cmds = []
for c in re.findall(r"^\.TP\n\.B ([a-z]+)", section, re.M):  # the term of each entry
    if not man_cmds or man_cmds[-1] != c:
        man_cmds.append(c)
t.eq(sorted(listed), sorted(table), "--help lists exactly the commands of the command table")
t.eq(sorted(man_cmds), sorted(table), "the man page documents exactly the commands of the command table")
t.eq(man_cmds, listed, "help and man page list the commands in the same order")
for c in table:
    rc, out, err = run([c, "--help"])
    t.ok(rc == EXIT_OK and out.startswith("Usage: hrtrail " + c), "%s --help: its usage (%s)" % (c, err))
rc, out, err = run(["grid", "--help"])
actions = re.findall(r"^(?:Usage:|      ) hrtrail grid ([a-z]+)", out, re.M)
t.eq(actions, ["info", "check", "accuracy", "upgrade"], "grid --help: a usage line for each action")
t.eq(re.findall(r"^\.TP\n\.B grid ([a-z]+)", section, re.M), actions, "the man page documents each action of grid")
rc, out, err = run(["grid", "frobnicate"])
t.ok(rc == EXIT_USAGE and all(a in err for a in actions), "an unknown grid action: the message lists the actions")

# no command: usage on stderr, exit 2, nothing on stdout
rc, out, err = run([])
t.eq(rc, EXIT_USAGE, "no command: exit code")
t.eq(out, "", "no command: nothing on stdout")
t.ok("no command given" in err, "no command: message")
t.ok(all(c in err for c in table), "no command: the message lists every command (%r)" % err)
rc, out, err = run(["frobnicate"])
t.ok(all(c in err for c in table), "an unknown command: the message lists every command (%r)" % err)
t.finish()
