"""Print the directory of Debian's python3 where a package installed under PREFIX belongs.

    site_dir.py PREFIX

Run by meson at configure time with /usr/bin/python3.  Of the interpreter's own
site directories (site.getsitepackages(), which is what it searches) the first
one of the form PREFIX/lib/... is chosen: /usr/local gives Debian's
/usr/local/lib/python3.X/dist-packages, /usr gives /usr/lib/python3/dist-packages.
For any other prefix there is none, and the standard scheme's
PREFIX/lib/python3.X/site-packages is printed (then PYTHONPATH must name it).
"""
import os
import site
import sys
import sysconfig


def site_dir(prefix):
    prefix = os.path.normpath(prefix)
    for d in site.getsitepackages():
        rel = os.path.relpath(d, prefix)
        if rel.split(os.sep)[0] == "lib":
            return d, True
    return sysconfig.get_path("purelib", "posix_prefix", vars={"base": prefix, "platbase": prefix}), False


if __name__ == "__main__":
    d, searched = site_dir(sys.argv[1])
    print(d)
    print("searched" if searched else "not-searched")
