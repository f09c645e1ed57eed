#!/usr/bin/python3
"""Every relative link of the README, DEVELOPERS.md and docs/*.md points at a file of the
repository, and every #anchor at a heading of that file (GitHub's anchor rule: lower case,
punctuation dropped, spaces as hyphens). Usage: docs_links.py SOURCE_DIR"""
import glob
import os
import re
import sys

os.chdir(sys.argv[1])
bad = []
for doc in ["README.md", "DEVELOPERS.md", "slurm/README.md"] + sorted(glob.glob("docs/*.md")):
    text = open(doc, encoding="utf-8").read()
    for link in re.findall(r"\]\(([^)\s]+)\)", text):
        if link.startswith(("http://", "https://", "mailto:")):
            continue
        path, _, anchor = link.partition("#")
        target = os.path.normpath(os.path.join(os.path.dirname(doc), path)) if path else doc
        if not os.path.exists(target):
            bad.append(f"{doc}: {link}: no file {target}")
            continue
        if anchor and target.endswith(".md"):
            heads = re.findall(r"^#+ (.+)$", open(target, encoding="utf-8").read(), re.M)
            anchors = {re.sub(r"[^\w\- ]", "", h.lower()).replace(" ", "-") for h in heads}
            if anchor not in anchors:
                bad.append(f"{doc}: {link}: no heading #{anchor} in {target}")
for line in bad:
    print("FAIL: " + line)
if bad:
    sys.exit(1)
print("documentation links ok")
