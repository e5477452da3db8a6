"""The parsing floor as a whole process: parse every dump in a folder with lxml, and nothing else.

Usage: python bench/floor.py FOLDER [--jobs N]

It imports lxml and the standard library only, so its start-up is Python's and lxml's: a floor
that imported tapgauge (and numpy with it) to find the files was ~0.2 s slower over 1,000 dumps,
which made tapgauge look closer to it than it is. With --jobs N the files are parsed in N processes.
"""

from __future__ import annotations

import argparse
import os
from multiprocessing import Pool

from lxml import etree


def parse_files(files: list[str]) -> int:
    for name in files:
        with open(name, "rb") as fh:
            etree.fromstring(fh.read())
    return len(files)


def dumps_in(folder: str) -> list[str]:
    """Every .xml file under the folder, in name order (as tapgauge finds them)."""
    found = []
    for root, dirs, names in os.walk(folder):
        dirs.sort()
        found += [os.path.join(root, n) for n in sorted(names) if n.endswith(".xml")]
    return found


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("folder")
    ap.add_argument("--jobs", type=int, default=1)
    a = ap.parse_args()
    files = dumps_in(a.folder)
    if a.jobs <= 1:
        parse_files(files)
        return
    with Pool(a.jobs) as pool:
        pool.map(parse_files, [files[k::a.jobs] for k in range(a.jobs)])


if __name__ == "__main__":
    main()
