#!/usr/bin/env python3
"""Refreshes the example outputs pasted in README.md from real runs.

Each example in README.md is a fenced block whose first line is
`$ burnout ARGS...`; everything after that line up to the closing fence (or
a line `...`, which marks a shortened example) is replaced by what the
release binary prints now. Run after changing any human output:

    cargo build --release && python3 scripts/readme-examples.py
"""
import pathlib
import re
import shlex
import subprocess

ROOT = pathlib.Path(__file__).resolve().parent.parent
BIN = ROOT / "target" / "release" / "burnout"
README = ROOT / "README.md"


def run(args):
    p = subprocess.run([str(BIN), *args], cwd=ROOT, capture_output=True, text=True)
    return (p.stdout + p.stderr).rstrip("\n")


def refresh(text):
    out = []
    lines = text.split("\n")
    i = 0
    while i < len(lines):
        line = lines[i]
        out.append(line)
        if line.startswith("$ burnout "):
            args = shlex.split(line[len("$ burnout "):])
            # Find the end of this example: a closing fence or a '...' line.
            j = i + 1
            while j < len(lines) and lines[j] not in ("```", "..."):
                j += 1
            shortened = j < len(lines) and lines[j] == "..."
            new = run(args).split("\n")
            if shortened:
                new = new[: max(1, j - i - 1)]
            out.extend(new)
            i = j
            continue
        i += 1
    return "\n".join(out)


if __name__ == "__main__":
    README.write_text(refresh(README.read_text()))
