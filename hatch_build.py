"""Build hook: compile the speciation core's single-point Newton iteration (chem/_speciate.c).

Runs for every wheel hatchling builds, editable installs included.  The shared
library is written beside its source (chem/_speciate.so) and shipped in the
wheel.  Without a C compiler the build goes on with a warning: chem then runs
its numpy iteration, which gives the same answers more slowly.
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
from pathlib import Path

from hatchling.builders.hooks.plugin.interface import BuildHookInterface

SOURCE = "chem/_speciate.c"
TARGET = "chem/_speciate.so"


def _compiler() -> str | None:
    for name in (os.environ.get("CC", ""), "cc", "gcc", "clang"):
        if name and shutil.which(name):
            return name
    return None


class CustomBuildHook(BuildHookInterface):
    PLUGIN_NAME = "custom"

    def initialize(self, version: str, build_data: dict) -> None:
        root = Path(self.root)
        src, out = root / SOURCE, root / TARGET
        cc = _compiler()
        if cc is None:
            print("protomix: no C compiler found; the speciation core will use its slower numpy iteration",
                  file=sys.stderr)
            return
        tmp = out.with_name(out.name + f".{os.getpid()}.tmp")
        cmd = [cc, "-O2", "-std=c99", "-shared", "-fPIC", "-o", str(tmp), str(src), "-lm"]
        try:
            subprocess.run(cmd, check=True, capture_output=True, text=True, timeout=300)
        except (OSError, subprocess.SubprocessError) as exc:
            detail = getattr(exc, "stderr", "") or str(exc)
            print(f"protomix: compiling {SOURCE} failed; the numpy iteration will be used:\n{detail}",
                  file=sys.stderr)
            tmp.unlink(missing_ok=True)
            return
        os.replace(tmp, out)
        build_data["pure_python"] = False
        build_data["infer_tag"] = True
        build_data["artifacts"].append(TARGET)
