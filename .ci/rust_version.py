"""Check that the workspace's rust-version covers every locked dependency's own rust-version.

The rust-version in Cargo.toml is the oldest toolchain promised to build the crates; a dependency
that needs a newer one breaks that promise. Run from the repository root: python3 .ci/rust_version.py
"""

from __future__ import annotations

import json
import subprocess
import sys


def version(text: str) -> tuple[int, int, int]:
    """``"1.85"`` or ``"1.75.0"`` as a comparable ``(major, minor, patch)``."""
    parts = [int(p) for p in text.split(".")] + [0, 0]
    return parts[0], parts[1], parts[2]


def dotted(v: tuple[int, int, int]) -> str:
    """``(1, 85, 0)`` as ``"1.85.0"``."""
    return ".".join(map(str, v))


def main() -> int:
    """Compare the workspace members' rust-version with every package in the lock file."""
    out = subprocess.run(
        ["cargo", "metadata", "--format-version", "1", "--locked"],
        check=True,
        capture_output=True,
        text=True,
    ).stdout
    meta = json.loads(out)
    members = set(meta["workspace_members"])
    ours = {p["name"]: p.get("rust_version") for p in meta["packages"] if p["id"] in members}
    missing = sorted(name for name, v in ours.items() if not v)
    if missing:
        print(f"rust-version: not set for {', '.join(missing)}")
        return 1
    promised = min(version(v) for v in ours.values())
    needs = [
        (version(p["rust_version"]), p["name"], p["version"])
        for p in meta["packages"]
        if p["id"] not in members and p.get("rust_version")
    ]
    too_new = sorted(n for n in needs if n[0] > promised)
    shown = dotted(promised)
    if too_new:
        for need, name, ver in too_new:
            print(f"rust-version {shown} is too old for {name} {ver}: it needs {dotted(need)}")
        return 1
    top = max(needs, default=((0, 0, 0), "nothing", ""))
    print(
        f"rust-version {shown} covers all {len(needs)} locked packages "
        f"(highest need: {top[1]} {top[2]}, {dotted(top[0])})"
    )
    return 0


if __name__ == "__main__":
    sys.exit(main())
