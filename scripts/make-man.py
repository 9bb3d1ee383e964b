#!/usr/bin/env python3
"""make-man.py — write docs/man/rainprint-COMMAND.1 for every command from its --help.

Usage: scripts/make-man.py TOOL [OUT_DIR]      (default OUT_DIR: docs/man beside this script)
       scripts/make-man.py TOOL --check DIR    (exit 1 when a page in DIR differs)

The help is the one source of a command's options (src/cli/opts.c generates it from the
option tables), so the pages are generated, never edited by hand. The date in the pages is
the version's, so regenerating without a change changes nothing."""
import os
import re
import subprocess
import sys

ENV = [
    ("RAINPRINT_TABLES", "folder of shipped scattering tables (default: share/rainprint/scattering beside the tool)"),
    ("RAINPRINT_PRESETS", "folder of preset YAML files (default: share/rainprint/dsd-presets)"),
    ("RAINPRINT_CLIMATES", "folder of climate YAML files (default: share/rainprint/dsd-presets/climates)"),
    ("RAINPRINT_CACHE", "cache of computed tables (default: $XDG_CACHE_HOME/rainprint, else ~/.cache/rainprint); see"),
]
CAUTION = ("Results are synthetic: before they feed any decision about floods or rainfall, "
           "validate them against local gauges and defer to the local authority.")


def esc(text):
    """roff text: backslashes and hyphens escaped, a leading dot or quote protected."""
    t = text.replace("\\", "\\e").replace("-", "\\-")
    if t.startswith(".") or t.startswith("'"):
        t = "\\&" + t
    return t


def run(tool, *args):
    return subprocess.run([tool, *args], capture_output=True, text=True, check=True).stdout


def commands(tool):
    """(name, summary) of every command from `rainprint --help`."""
    out, cmds, on = run(tool, "--help"), [], False
    for line in out.splitlines():
        if line.startswith("Commands:"):
            on = True
            continue
        if on:
            m = re.match(r"^  (\S+)\s+(.*)$", line)
            if m:
                cmds.append((m.group(1), m.group(2)))
            elif line.strip() == "":
                break
    return cmds


def parse_help(text):
    """usage, description paragraphs, option sections [(title, [(flag, help)])], examples, notes."""
    lines = text.splitlines()
    usage = [lines[0][len("Usage: rainprint "):]] if lines and lines[0].startswith("Usage: ") else [""]
    i, about = 1, []
    while i < len(lines) and lines[i].startswith(" ") and lines[i].strip():
        usage.append(lines[i].strip())  # usage continued on the next lines
        i += 1
    while i < len(lines) and lines[i].strip() == "":
        i += 1
    while i < len(lines) and not re.match(r"^\S.*:$", lines[i]):
        about.append(lines[i])
        i += 1
    sections, examples, notes = [], [], []
    cur = None
    while i < len(lines):
        line = lines[i]
        m = re.match(r"^(\S.*):$", line)
        if m:
            title = m.group(1)
            if title in ("Examples", "Example"):
                cur = "examples"
            else:
                sections.append((title, []))
                cur = "options"
            i += 1
            continue
        if cur == "examples":
            if line.startswith("  "):
                examples.append(line.strip())
            elif line.strip():
                notes.append(line)
        elif cur == "options":
            om = re.match(r"^  (-\S.*?)(?:\s{2,}(.*))?$", line)
            if om and line.startswith("  -"):
                sections[-1][1].append([om.group(1).strip(), (om.group(2) or "").strip()])
            elif line.startswith("   ") and sections[-1][1]:
                sections[-1][1][-1][1] += " " + line.strip()
            elif line.strip():
                notes.append(line)
        i += 1
    return usage, about, sections, examples, notes


def flag_roff(flag):
    parts = [p.strip() for p in flag.split(",")]
    if re.match(r"^-\w, --", flag):
        return ".BR " + " \", \" ".join(esc(p) for p in parts)
    m = re.match(r"^(\S+)\s+(.+)$", flag)
    if m:
        return '.BI "%s " %s' % (esc(m.group(1)), esc(m.group(2)))
    return ".B " + esc(flag)


def page(tool, name, summary, version, date):
    usage, about, sections, examples, notes = parse_help(run(tool, name, "--help"))
    out = ['.TH RAINPRINT\\-%s 1 "%s" "rainprint %s" "rainprint manual"' % (esc(name.upper()), date, version),
           ".SH NAME", "rainprint\\-%s \\- %s" % (esc(name), esc(summary)),
           ".SH SYNOPSIS", ".nf"] + [esc(("rainprint " if k == 0 else "") + u) for k, u in enumerate(usage)] + [".fi", ".SH DESCRIPTION"]
    paragraph = []
    for line in about + [""]:
        if line.strip():
            paragraph.append(line.strip())
        elif paragraph:
            out.append(esc(" ".join(paragraph)))
            out.append(".PP")
            paragraph = []
    if out[-1] == ".PP":
        out.pop()
    out.append(".SH OPTIONS")
    for title, opts in sections:
        out.append(".SS " + esc(title))
        for flag, text in opts:
            out += [".TP", flag_roff(flag), esc(text)]
    if notes:
        out += [".SH NOTES", esc(" ".join(n.strip() for n in notes))]
    out += [".SH EXIT STATUS",
            "0 on success; 2 for bad usage or input (a one\\-line message names the option, file, "
            "line or field); 1 when a computation or an output fails.", ".SH ENVIRONMENT"]
    for var, text in ENV:
        out += [".TP", ".B " + var, esc(text)]
    out.append(".BR rainprint\\-cache (1)")
    if examples:
        out += [".SH EXAMPLES", ".nf"] + [esc(e) for e in examples] + [".fi"]
    out += [".SH CAUTION", esc(CAUTION), ".SH SEE ALSO", ".BR rainprint (1)"]
    return "\n".join(out) + "\n"


def main():
    args = sys.argv[1:]
    if not args:
        sys.exit(__doc__)
    tool = args[0]
    check = len(args) > 2 and args[1] == "--check"
    out_dir = args[2] if check else (args[1] if len(args) > 1 else
                                     os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "docs", "man"))
    version = run(tool, "--version").split()[-1]
    date = "2026-12-02"  # fixed: pages change only when the help does
    differ = []
    for name, summary in commands(tool):
        text = page(tool, name, summary, version, date)
        path = os.path.join(out_dir, "rainprint-%s.1" % name)
        if check:
            old = open(path).read() if os.path.exists(path) else None
            if old != text:
                differ.append(path)
        else:
            with open(path, "w") as f:
                f.write(text)
    if check and differ:
        print("man pages out of date (run scripts/make-man.py TOOL):", *differ)
        sys.exit(1)


if __name__ == "__main__":
    main()
