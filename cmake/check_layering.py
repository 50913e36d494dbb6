#!/usr/bin/env python3
"""The layering rule of lib/ (DEVELOPERS.md, "Rooms"): which room's code may include which room's headers.

Every source under lib/ sits in a room, lib/<room>/ (its GDAL-only files in lib/<room>/gdal/); every public header
include/gridtruth/<name>.hpp belongs to one room too (PUBLIC_ROOM). A file may include the headers of its own room
and of the rooms ALLOWED lists for it, nothing else; in particular io and audit never include report, choose or
cells. Checked over the direct #include "..." lines of lib/ and include/gridtruth/ (a quoted name is looked up
beside the including file first, then under lib/, as the compiler does with lib/ on the include path).

Usage: check_layering.py SOURCE_DIR. Prints each violation (file:line: what) and exits 1 if there is any.
       check_layering.py --self-test: builds small trees that break each rule and one that keeps them, and checks
       that the rule is reported exactly where it is broken (so the check itself can fail).
"""
import os
import re
import sys

ROOMS = ("core", "io", "audit", "report", "choose", "cells")

# The rooms each room may include besides itself.
ALLOWED = {
    "core": set(),
    "io": {"core", "audit"},      # the result table formats AuditResult
    "audit": {"core", "io"},      # the runner streams features from the readers
    "report": {"core", "io", "audit"},
    "choose": {"core", "io", "audit"},
    "cells": {"core", "io", "audit"},  # the class counts are read with the one CSV reader
    "testing": {"core", "io", "audit", "report", "choose", "cells"},  # the matchers may use the whole library
}

# The room of each public header (include/gridtruth/<name>.hpp). A header missing here is a violation: a new
# public header must be placed in a room.
PUBLIC_ROOM = {
    "error": "core", "geometry": "core", "crs": "core", "tolerance": "core", "version": "core",
    "compensated_sum": "core", "text": "core",
    "io": "io",
    "audit": "audit", "runner": "audit", "statistics": "audit",
    "report": "report",
    "rank": "choose", "tailor": "choose",
    "cells": "cells",
    "testing": "testing",  # for users' test programs only: no room of the library includes it
}

INCLUDE = re.compile(r'^\s*#\s*include\s+"([^"]+)"')


def room_of_lib_path(lib_dir, path):
    rel = os.path.relpath(path, lib_dir).split(os.sep)
    return rel[0] if len(rel) > 1 and rel[0] in ROOMS else None


def room_of_include(lib_dir, including_file, name):
    """(room, description) of a quoted include, or (None, None) for one outside gridtruth."""
    if name.startswith("gridtruth/"):
        stem = os.path.splitext(os.path.basename(name))[0]
        return PUBLIC_ROOM.get(stem, "unplaced"), name
    for base in (os.path.dirname(including_file), lib_dir):
        candidate = os.path.normpath(os.path.join(base, name))
        if os.path.isfile(candidate) and candidate.startswith(lib_dir + os.sep):
            return room_of_lib_path(lib_dir, candidate), os.path.relpath(candidate, os.path.dirname(lib_dir))
    return None, None


def self_test():
    import tempfile

    def tree(files):
        top = tempfile.mkdtemp(prefix="layering-")
        for rel, text in files.items():
            path = os.path.join(top, rel)
            os.makedirs(os.path.dirname(path), exist_ok=True)
            with open(path, "w", encoding="utf-8") as f:
                f.write(text)
        return top

    base = {
        "include/gridtruth/io.hpp": '#include "gridtruth/geometry.hpp"\n',
        "include/gridtruth/geometry.hpp": "",
        "include/gridtruth/report.hpp": '#include "gridtruth/io.hpp"\n',
        "lib/core/proj_handles.hpp": "",
        "lib/io/io_detail.hpp": '#include "core/proj_handles.hpp"\n',
        "lib/io/io.cpp": '#include "gridtruth/io.hpp"\n#include "io_detail.hpp"\n',
        "lib/report/report.cpp": '#include "gridtruth/report.hpp"\n#include "io/io_detail.hpp"\n',
    }
    cases = [
        ({}, []),
        ({"lib/io/io.cpp": '#include "gridtruth/io.hpp"\n#include "gridtruth/report.hpp"\n'}, ["lib/io/io.cpp:2"]),
        ({"lib/core/gdal/x.cpp": '#include "io/io_detail.hpp"\n'}, ["lib/core/gdal/x.cpp:1"]),
        ({"lib/stray.cpp": ""}, ["lib/stray.cpp"]),
        ({"include/gridtruth/new.hpp": ""}, ["include/gridtruth/new.hpp"]),
        ({"lib/io/io.cpp": '#include "gridtruth/testing.hpp"\n'}, ["lib/io/io.cpp:1"]),
    ]
    import subprocess
    failures = 0
    for change, expected in cases:
        top = tree({**base, **change})
        done = subprocess.run([sys.executable, __file__, top], capture_output=True, text=True)
        reported = [line for line in done.stdout.splitlines() if not line.startswith("check_layering:")]
        ok = done.returncode == (1 if expected else 0) and len(reported) == len(expected) and all(
            any(line.startswith(e) for line in reported) for e in expected)
        if not ok:
            failures += 1
            print(f"self-test: {change or 'clean tree'}: expected {expected}, got rc {done.returncode}: {reported}")
    print(f"check_layering self-test: {len(cases)} cases, {failures} failed")
    return 1 if failures else 0


def main():
    if len(sys.argv) == 2 and sys.argv[1] == "--self-test":
        return self_test()
    if len(sys.argv) != 2:
        print(__doc__)
        return 2
    source_dir = os.path.abspath(sys.argv[1])
    lib_dir = os.path.join(source_dir, "lib")
    include_dir = os.path.join(source_dir, "include", "gridtruth")
    problems = []
    files = []
    for top, _, names in os.walk(lib_dir):
        for n in names:
            if n.endswith((".cpp", ".hpp", ".h")):
                path = os.path.join(top, n)
                room = room_of_lib_path(lib_dir, path)
                if room is None:
                    problems.append(f"{os.path.relpath(path, source_dir)}: not in a room (lib/<room>/, rooms: "
                                    f"{', '.join(ROOMS)})")
                    continue
                files.append((path, room))
    for n in sorted(os.listdir(include_dir)):
        if not n.endswith(".hpp"):
            continue
        stem = os.path.splitext(n)[0]
        if stem not in PUBLIC_ROOM:
            problems.append(f"include/gridtruth/{n}: public header not placed in a room (cmake/check_layering.py "
                            f"PUBLIC_ROOM)")
            continue
        files.append((os.path.join(include_dir, n), PUBLIC_ROOM[stem]))
    checked = 0
    for path, room in sorted(files):
        with open(path, encoding="utf-8") as f:
            for number, line in enumerate(f, 1):
                m = INCLUDE.match(line)
                if not m:
                    continue
                target_room, what = room_of_include(lib_dir, path, m.group(1))
                if target_room is None:
                    continue
                checked += 1
                where = f"{os.path.relpath(path, source_dir)}:{number}"
                if target_room == "unplaced":
                    problems.append(f"{where}: includes {what}, a public header placed in no room")
                elif target_room == "testing" and room != "testing":
                    problems.append(f"{where}: includes {what}, which is for users' tests only")
                elif target_room != room and target_room not in ALLOWED.get(room, set()):
                    problems.append(f"{where}: the {room} room includes {what} of the {target_room} room "
                                    f"(allowed: {', '.join(sorted(ALLOWED.get(room, set()))) or 'its own only'})")
    for p in problems:
        print(p)
    print(f"check_layering: {len(files)} files, {checked} includes of gridtruth headers, {len(problems)} problems")
    return 1 if problems else 0


if __name__ == "__main__":
    sys.exit(main())
