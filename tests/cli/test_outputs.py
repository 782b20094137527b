#!/usr/bin/python3
"""Files the command writes (-o of plot, population and demo; import -o; grid upgrade NEW).

A regular file is replaced at once through a temporary file of an unpredictable name beside it,
keeping its mode; a symbolic link is written through (the link stays); a device or a FIFO is
written in place (plot, population, demo) or refused (a grid); a failed write leaves the old file
and no temporary file; a link planted at a guessable temporary name is not followed; runs writing
other files in the same directory do not disturb each other.

File types and modes are read with Python's os and stat modules (standard library); what a FIFO
and a character device are is POSIX (from memory).
"""
import os
import select
import stat
import subprocess
import threading
import time

from clitest import EXE, EXIT_FILE, EXIT_OK, Checks, make_grid, run, tmpdir

t = Checks("cli-outputs")
d = tmpdir()
grid = make_grid(d)
G = ["--grid", grid]

# what each command writes, as (name, arguments before -o); the demo also writes FILE-density.svg
WRITERS = [
    ("plot", ["plot"] + G + ["--track", "1,2.4"]),
    ("population", ["population"] + G + ["--stars", "2000", "--age", "1Gyr"]),
    ("demo", ["demo"] + G),
]


def svg_of(args):
    """The SVG a command writes to standard output (-o -): what every file written must hold."""
    rc, out, err = run(args + ["-o", "-"])  # the SVG alone (the report is left out)
    t.eq(rc, EXIT_OK, "%s -o - (%s)" % (args[0], err))
    t.ok(out.startswith("<?xml") and out.endswith("</svg>\n"), "%s -o -: the SVG alone" % args[0])
    return out.encode()


def listing(directory):
    return sorted(os.listdir(directory))


def read(path):
    """The bytes of a file, None if there is none."""
    try:
        with open(path, "rb") as f:
            return f.read()
    except OSError:
        return None


def write(path, data, mode=None):
    with open(path, "wb") as f:
        f.write(data)
    if mode is not None:
        os.chmod(path, mode)


def run_umask(args, mask, cwd=None):
    p = subprocess.run([EXE] + args, capture_output=True, text=True, cwd=cwd, preexec_fn=lambda: os.umask(mask),
                       timeout=600)
    return p.returncode, p.stdout, p.stderr


# ------------------------------------------------------------------ a regular file
svg = {name: svg_of(args) for name, args in WRITERS}
for name, args in WRITERS:
    w = os.path.join(d, "plain-" + name)
    os.mkdir(w)
    out = os.path.join(w, "hr.svg")
    # a new file: 0644 less the umask (umask 0: 0644, not 0666)
    rc, _, err = run_umask(args + ["-o", out], 0)
    t.eq(rc, EXIT_OK, "%s -o new file: exit code (%s)" % (name, err))
    t.eq(read(out), svg[name], "%s -o new file: the SVG" % name)
    t.eq(stat.S_IMODE(os.stat(out).st_mode), 0o644, "%s -o new file with umask 0: mode 0644" % name)
    rc, _, err = run_umask(args + ["-o", out], 0o027)
    t.eq(rc, EXIT_OK, "%s -o, umask 027: exit code (%s)" % (name, err))
    # the file existed: its mode is kept, the umask does not apply
    t.eq(stat.S_IMODE(os.stat(out).st_mode), 0o644, "%s -o existing file: its mode kept (0644)" % name)
    write(out, b"old\n", 0o600)
    rc, _, err = run(args + ["-o", out])
    t.eq(rc, EXIT_OK, "%s -o over a 0600 file: exit code (%s)" % (name, err))
    t.eq(read(out), svg[name], "%s -o over a file: the SVG" % name)
    t.eq(stat.S_IMODE(os.stat(out).st_mode), 0o600, "%s -o over a 0600 file: mode 0600 kept" % name)
    want = ["hr-density.svg", "hr.svg"] if name == "demo" else ["hr.svg"]
    t.eq(listing(w), want, "%s -o: nothing but the output in its directory (no temporary file)" % name)

# ------------------------------------------------------------------ a symbolic link
for name, args in WRITERS:
    w = os.path.join(d, "link-" + name)
    os.makedirs(os.path.join(w, "real"))
    target = os.path.join(w, "real", "target.svg")
    write(target, b"old\n", 0o640)
    link = os.path.join(w, "link.svg")
    os.symlink(os.path.join("real", "target.svg"), link)
    rc, _, err = run(args + ["-o", link])
    t.eq(rc, EXIT_OK, "%s -o LINK: exit code (%s)" % (name, err))
    t.ok(os.path.islink(link) and os.readlink(link) == os.path.join("real", "target.svg"),
         "%s -o LINK: the link stays a link to its target" % name)
    t.eq(read(target), svg[name], "%s -o LINK: the target holds the SVG" % name)
    t.eq(stat.S_IMODE(os.stat(target).st_mode), 0o640, "%s -o LINK: the target's mode kept" % name)
    t.eq(listing(os.path.join(w, "real")), ["target.svg"], "%s -o LINK: no temporary file beside the target" % name)
    # a link to a file not yet made (and a link to that link): the file is made where the chain ends
    os.symlink("made.svg", os.path.join(w, "real", "to-made.svg"))
    os.symlink(os.path.join("real", "to-made.svg"), os.path.join(w, "chain.svg"))
    rc, _, err = run(args + ["-o", os.path.join(w, "chain.svg")])
    t.eq(rc, EXIT_OK, "%s -o dangling LINK: exit code (%s)" % (name, err))
    t.ok(os.path.islink(os.path.join(w, "chain.svg")) and os.path.islink(os.path.join(w, "real", "to-made.svg")),
         "%s -o dangling LINK: both links stay" % name)
    t.ok(os.path.isfile(os.path.join(w, "real", "made.svg")) and
         read(os.path.join(w, "real", "made.svg")) == svg[name], "%s -o dangling LINK: the file made at its end" % name)

# ------------------------------------------------------------------ a FIFO: written into, read here from a thread


def read_fifo(path, proc, got):
    """Everything written into the FIFO while proc runs, and what is left in it when proc has ended
    (opened without blocking, so that a command that never opens the FIFO cannot hang the test)."""
    fd = os.open(path, os.O_RDONLY | os.O_NONBLOCK)
    try:
        while proc.poll() is None:
            ready, _, _ = select.select([fd], [], [], 0.2)
            chunk = b""
            if ready:
                try:
                    chunk = os.read(fd, 65536)
                except BlockingIOError:
                    pass
            if chunk:
                got.append(chunk)
            else:
                time.sleep(0.01)  # no writer yet (a FIFO without writers reads as at its end)
        while True:
            try:
                chunk = os.read(fd, 65536)
            except BlockingIOError:
                break
            if not chunk:
                break
            got.append(chunk)
    finally:
        os.close(fd)


fifo_ok = True
for name, args in WRITERS:
    w = os.path.join(d, "fifo-" + name)
    os.mkdir(w)
    fifo = os.path.join(w, "hr.svg")
    os.mkfifo(fifo)
    got = []
    rfd = os.open(fifo, os.O_RDONLY | os.O_NONBLOCK)  # a reader is there before the command starts
    proc = subprocess.Popen([EXE] + args + ["-o", fifo], stdout=subprocess.PIPE, stderr=subprocess.PIPE, cwd=w)
    reader = threading.Thread(target=read_fifo, args=(fifo, proc, got))
    reader.start()
    out, err = proc.communicate(timeout=600)
    reader.join(timeout=60)
    os.close(rfd)
    t.eq(proc.returncode, EXIT_OK, "%s -o FIFO: exit code (%s)" % (name, err.decode(errors="replace")))
    fifo_ok = t.ok(stat.S_ISFIFO(os.lstat(fifo).st_mode), "%s -o FIFO: still a FIFO" % name) and fifo_ok
    t.eq(b"".join(got), svg[name], "%s -o FIFO: the SVG went into the FIFO" % name)
    t.eq(listing(w), ["hr.svg"], "%s -o FIFO: nothing else written beside it (no density file, no temporary)" % name)

# ------------------------------------------------------------------ a device
# First a character device of our own (the same device as /dev/null), so that a build that would
# replace the device does it here and not to the system's /dev/null; where no device can be made,
# the FIFOs above stand in for it.
is_root = os.geteuid() == 0
own_null_ok = fifo_ok
if not is_root:
    print("SKIP: -o to a device: not root (CI runs this test as root)")
else:
    w = os.path.join(d, "dev")
    os.mkdir(w)
    node = os.path.join(w, "null")
    try:
        os.mknod(node, stat.S_IFCHR | 0o666, os.stat("/dev/null").st_rdev)
    except OSError as e:
        print("SKIP: no device node of our own (%s); /dev/null only" % e)
        node = None
    if node:
        for name, args in WRITERS:
            rc, out, err = run(args + ["-o", node], cwd=w)
            good = rc == EXIT_OK and stat.S_ISCHR(os.lstat(node).st_mode)
            own_null_ok = own_null_ok and good
            t.ok(good, "%s -o DEVICE (a node of our own): exit 0 and still a character device (%d, %s)" % (name, rc, err))
            t.eq(listing(w), ["null"], "%s -o DEVICE: nothing written beside the device" % name)
    if not own_null_ok:
        t.ok(False, "-o /dev/null not tried: the device of our own (or a FIFO) was replaced")
    else:
        for name, args in WRITERS:
            rc, out, err = run(args + ["-o", "/dev/null"], cwd=d)
            t.eq(rc, EXIT_OK, "%s -o /dev/null as root: exit code (%s)" % (name, err))
            t.ok(stat.S_ISCHR(os.lstat("/dev/null").st_mode), "%s -o /dev/null as root: /dev/null is a character device" % name)
        t.eq([n for n in os.listdir("/dev") if "null" in n], ["null"],
             "-o /dev/null: nothing written beside it in /dev (no temporary, no density file)")

# ------------------------------------------------------------------ links planted at guessable temporary names
for name, args in WRITERS:
    w = os.path.join(d, "planted-" + name)
    os.mkdir(w)
    victim = os.path.join(d, "victim-" + name + ".txt")
    write(victim, b"precious\n")
    names = []
    for base in ("hr.svg", "hr-density.svg"):
        for pattern in ("%s.tmp", ".%s.tmp", "%s~", ".%s.swp", "%s.new", "%s.part", "%s.tmp.1", ".%s"):
            names.append(pattern % base)
    for n in names:
        os.symlink(victim, os.path.join(w, n))
    for existing in (False, True):
        if existing:
            write(os.path.join(w, "hr.svg"), b"old\n")
        rc, _, err = run(args + ["-o", os.path.join(w, "hr.svg")])
        what = "%s -o FILE (%s) with links planted at %d guessable names" % (
            name, "existing" if existing else "new", len(names))
        t.eq(rc, EXIT_OK, what + ": exit code (%s)" % err)
        t.eq(read(victim), b"precious\n", what + ": the file the links point to is untouched")
        t.ok(all(os.path.islink(os.path.join(w, n)) and os.readlink(os.path.join(w, n)) == victim for n in names),
             what + ": the planted links are untouched")
        t.ok(not os.path.islink(os.path.join(w, "hr.svg")) and read(os.path.join(w, "hr.svg")) == svg[name],
             what + ": the output is a file of its own with the SVG")
        t.eq(sorted(set(listing(w)) - set(names)), ["hr-density.svg", "hr.svg"] if name == "demo" else ["hr.svg"],
             what + ": nothing else left in the directory")

# ------------------------------------------------------------------ runs beside each other
# One run's output may be named like another's temporary file: hr.svg and hr.svg.tmp.  First one
# after the other (the second must not take the first one's file for its temporary), then all at once.
w = os.path.join(d, "neighbours")
os.mkdir(w)
plot_a = ["plot"] + G + ["--track", "1"]
plot_b = ["plot"] + G + ["--track", "2.4", "--title", "the other run"]
want_a, want_b = svg_of(plot_a), svg_of(plot_b)
t.ok(want_a != want_b, "the two runs write different SVGs")
outs = {"hr.svg": (plot_a, want_a), "hr.svg.tmp": (plot_b, want_b), ".hr.svg.tmp": (plot_b, want_b),
        "other.svg": (plot_b, want_b)}
for order in (["hr.svg.tmp", "hr.svg"], ["hr.svg", "hr.svg.tmp"]):
    for f in os.listdir(w):
        os.remove(os.path.join(w, f))
    for n in order:
        rc, _, err = run(outs[n][0] + ["-o", os.path.join(w, n)])
        t.eq(rc, EXIT_OK, "%s after %s: exit code (%s)" % (n, order[0], err))
    t.eq(listing(w), sorted(order), "runs one after the other (%s first): both files there, nothing else" % order[0])
    t.ok(all(read(os.path.join(w, n)) == outs[n][1] for n in order),
         "runs one after the other (%s first): each file holds its own run's SVG" % order[0])
for rounds in range(3):
    for f in os.listdir(w):
        os.remove(os.path.join(w, f))
    procs = [(n, subprocess.Popen([EXE] + outs[n][0] + ["-o", os.path.join(w, n)], stdout=subprocess.PIPE,
                                  stderr=subprocess.PIPE)) for n in sorted(outs) for _ in range(2)]
    codes = [(n, p.wait(timeout=600)) for n, p in procs]
    for _, p in procs:
        p.stdout.close()
        p.stderr.close()
    t.ok(all(rc == EXIT_OK for _, rc in codes), "%d runs at once: every one exits 0 (%r)" % (len(procs), codes))
    t.eq(listing(w), sorted(outs), "%d runs at once: their files and nothing else" % len(procs))
    t.ok(all(read(os.path.join(w, n)) == outs[n][1] for n in outs), "%d runs at once: each file its run's SVG" % len(procs))

# ------------------------------------------------------------------ a failed write
# RLIMIT_FSIZE (sh's ulimit -f, in 512-byte blocks under dash, 1024 under bash: both far below the SVG)
for name, args in WRITERS:
    w = os.path.join(d, "full-" + name)
    os.makedirs(os.path.join(w, "real"))
    old = b"the previous file\n"
    plain = os.path.join(w, "hr.svg")
    target = os.path.join(w, "real", "target.svg")
    write(plain, old, 0o640)
    write(target, old)
    os.symlink(os.path.join("real", "target.svg"), os.path.join(w, "link.svg"))
    for path in (plain, os.path.join(w, "link.svg")):
        before = (listing(w), listing(os.path.join(w, "real")))
        cmd = "ulimit -f 4; exec \"$0\" \"$@\""
        p = subprocess.run(["/bin/sh", "-c", cmd, EXE] + args + ["-o", path], capture_output=True, text=True, timeout=600)
        what = "%s -o %s past 'ulimit -f'" % (name, os.path.basename(path))
        t.eq(p.returncode, EXIT_FILE, what + ": exit code 4 (%s)" % p.stderr.strip())
        t.ok(path in p.stderr and p.stderr.count("\n") == 1, what + ": one message naming the file (%r)" % p.stderr)
        t.eq(read(plain), old, what + ": the previous file intact")
        t.eq(read(target), old, what + ": the link's target intact")
        t.ok(os.path.islink(os.path.join(w, "link.svg")), what + ": the link stays")
        t.eq((listing(w), listing(os.path.join(w, "real"))), before, what + ": no temporary file left")
        t.eq(p.stdout, "", what + ": nothing on standard output")

# ------------------------------------------------------------------ grids: written by the library (import, upgrade)
src = os.path.join(d, "tracks")
os.mkdir(src)
for m in ("1", "1.5", "2"):
    rc, out, err = run(["track"] + G + ["--mass", m, "--csv"])
    with open(os.path.join(src, "m%s.csv" % m), "w") as f:
        f.write(out)
IMPORT = ["import", "--force", "--map", "initial_mass_msun=initial_mass_msun,z=z", src, "-o"]
w = os.path.join(d, "grids")
os.makedirs(os.path.join(w, "real"))
target = os.path.join(w, "real", "grid.h5")
write(target, b"old\n", 0o600)
os.symlink(os.path.join("real", "grid.h5"), os.path.join(w, "link.h5"))
rc, out, err = run(IMPORT + [os.path.join(w, "link.h5")])
t.eq(rc, EXIT_OK, "import -o LINK: exit code (%s)" % err)
t.ok(os.path.islink(os.path.join(w, "link.h5")), "import -o LINK: the link stays")
t.eq(read(target)[:8], b"\x89HDF\r\n\x1a\n", "import -o LINK: the target is the new grid (HDF5 signature)")
rc, out, err = run(["grid", "info", "--grid", os.path.join(w, "link.h5"), "--csv"])
t.ok(rc == EXIT_OK and out.count("\n") == 4, "import -o LINK: the grid opens through the link with 3 tracks (%s)" % err)
write(target, b"old\n")
rc, out, err = run(["grid", "upgrade", grid, os.path.join(w, "link.h5")])
t.eq(rc, EXIT_OK, "grid upgrade OLD LINK: exit code (%s)" % err)
t.ok(os.path.islink(os.path.join(w, "link.h5")), "grid upgrade OLD LINK: the link stays")
t.eq(read(target)[:8], b"\x89HDF\r\n\x1a\n", "grid upgrade OLD LINK: the target is the new grid")
t.eq(listing(os.path.join(w, "real")), ["grid.h5"], "import and upgrade through a link: no temporary left")

fifo = os.path.join(w, "grid.fifo")
os.mkfifo(fifo)
refused = [("FIFO", fifo), ("standard output", "-")]
own_node = os.path.join(d, "dev", "null")
if is_root and own_null_ok and os.path.exists(own_node):
    refused.append(("own device", own_node))
for what, path in refused:
    for args in (IMPORT + [path], ["grid", "upgrade", grid, path]):
        rc, out, err = run(args, cwd=w)
        name = "%s to a %s" % (args[0] if args[0] == "import" else "grid upgrade", what)
        t.eq(rc, EXIT_FILE, name + ": refused, exit code 4 (%s)" % err.strip())
        t.ok("cannot be" in err and err.count("\n") == 1, name + ": one line saying why (%r)" % err)
        t.eq(out, "", name + ": nothing on standard output")
t.ok(stat.S_ISFIFO(os.lstat(fifo).st_mode), "import and upgrade to a FIFO: still a FIFO")
t.eq(sorted(os.listdir(w)), ["grid.fifo", "link.h5", "real"], "refused grids: nothing written")
own_null_ok = own_null_ok and stat.S_ISFIFO(os.lstat(fifo).st_mode)
if is_root and own_null_ok and os.path.exists(own_node):
    own_null_ok = t.ok(stat.S_ISCHR(os.lstat(own_node).st_mode), "import and upgrade to a device of our own: still a device")
if is_root and own_null_ok:  # only then the system's /dev/null
    for args in (IMPORT + ["/dev/null"], ["grid", "upgrade", grid, "/dev/null"]):
        rc, out, err = run(args)
        t.ok(rc == EXIT_FILE and "device" in err, "%s to /dev/null as root: refused (%s)" % (args[0], err.strip()))
        t.ok(stat.S_ISCHR(os.lstat("/dev/null").st_mode), "%s to /dev/null as root: still a character device" % args[0])
t.finish()
