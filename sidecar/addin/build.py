#!/usr/bin/env python3
"""Builds the LibreOffice extension (trialyst.oxt) from extension/.

    python3 sidecar/addin/build.py OUT.oxt [--with-program PATH]

--with-program puts a trialyst program inside the extension (bin/), which
the add-in uses when the options page and the TRIALYST_PROGRAM variable
name none. Standard library only.
"""

import argparse
import os
import re
import sys
import zipfile

HERE = os.path.dirname(os.path.abspath(__file__))
SOURCE = os.path.join(HERE, "extension")
CARGO = os.path.join(HERE, "..", "..", "Cargo.toml")


def version():
    with open(CARGO, encoding="utf-8") as handle:
        found = re.search(r'^version\s*=\s*"([^"]+)"', handle.read(), re.MULTILINE)
    return found.group(1) if found else "0.0.0"


def build(out, program=None):
    with zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as archive:
        for folder, _, files in os.walk(SOURCE):
            for name in sorted(files):
                if name.endswith(".pyc"):
                    continue
                path = os.path.join(folder, name)
                inside = os.path.relpath(path, SOURCE).replace(os.sep, "/")
                with open(path, "rb") as handle:
                    data = handle.read()
                if inside == "description.xml":
                    data = data.replace(b"@VERSION@", version().encode())
                archive.writestr(inside, data)
        if program:
            info = zipfile.ZipInfo("bin/" + os.path.basename(program))
            info.external_attr = 0o755 << 16
            info.compress_type = zipfile.ZIP_DEFLATED
            with open(program, "rb") as handle:
                archive.writestr(info, handle.read())
    return out


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("out")
    parser.add_argument("--with-program")
    arguments = parser.parse_args()
    print(build(arguments.out, arguments.with_program))


if __name__ == "__main__":
    sys.exit(main())
