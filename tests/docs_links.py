#!/usr/bin/python3
"""Every relative link of the README, DEVELOPERS.md and docs/*.md points at a file of the
repository, and every #anchor at a heading of that file (GitHub's anchor rule: lower case,
punctuation dropped, spaces as hyphens). Fenced code blocks (``` or ~~~) are example text, not
Markdown: their brackets are no links and their '#' lines no headings.
Usage: docs_links.py SOURCE_DIR, or docs_links.py --self-test"""
import glob
import os
import re
import sys
import tempfile

FENCE = re.compile(r"^\s*(`{3,}|~{3,})")


def prose(text):
    """The Markdown text outside fenced code blocks (CommonMark: a fence closes at a line of the
    same character, at least as long, with nothing after it; an unclosed fence runs to the end)."""
    kept, fence = [], None
    for line in text.splitlines():
        opening = FENCE.match(line)
        if fence is None:
            if opening:
                fence = opening.group(1)
            else:
                kept.append(line)
        elif opening and line.strip() == opening.group(1) and opening.group(1).startswith(fence):
            fence = None
    return "\n".join(kept)


def anchors(path):
    heads = re.findall(r"^#+ (.+)$", prose(open(path, encoding="utf-8").read()), re.M)
    return {re.sub(r"[^\w\- ]", "", h.lower()).replace(" ", "-") for h in heads}


def broken_links(docs):
    """One line per broken link of `docs` (paths relative to the current directory)."""
    bad = []
    for doc in docs:
        for link in re.findall(r"\]\(([^)\s]+)\)", prose(open(doc, encoding="utf-8").read())):
            if link.startswith(("http://", "https://", "mailto:")):
                continue
            path, _, anchor = link.partition("#")
            target = os.path.normpath(os.path.join(os.path.dirname(doc), path)) if path else doc
            if not os.path.exists(target):
                bad.append(f"{doc}: {link}: no file {target}")
                continue
            if anchor and target.endswith(".md") and anchor not in anchors(target):
                bad.append(f"{doc}: {link}: no heading #{anchor} in {target}")
    return bad


def self_test():
    """The checker on small documents whose broken links are known: a link or a heading inside
    a fence does not count, the same outside does."""
    cases = {
        # Inside a fence: neither link is checked.
        "fenced.md": "# Top\n\n```yaml\nsee [x](missing.md) and [y](#nowhere)\n```\n",
        # A tilde fence holding a backtick line stays open until its own closing fence.
        "tilde.md": "~~~\n```\n[x](missing.md)\n~~~\n",
        # Outside a fence: both broken.
        "plain.md": "# Top\n\nsee [x](missing.md) and [y](#nowhere)\n",
        # A '#' comment inside a fence is no heading, so no anchor.
        "comment.md": "```bash\n# Build step\n```\n\n[z](#build-step) [t](#title)\n\n# Title\n",
        # After the fence closes, links count again.
        "after.md": "```\n[x](fine.md)\n```\n[w](gone.md)\n",
    }
    expected = {
        "plain.md: missing.md: no file missing.md",
        "plain.md: #nowhere: no heading #nowhere in plain.md",
        "comment.md: #build-step: no heading #build-step in comment.md",
        "after.md: gone.md: no file gone.md",
    }
    with tempfile.TemporaryDirectory() as root:
        os.chdir(root)
        for name, text in cases.items():
            with open(name, "w", encoding="utf-8") as f:
                f.write(text)
        got = set(broken_links(sorted(cases)))
    if got != expected:
        print("FAIL: self-test: unexpected", sorted(got - expected),
              "missing", sorted(expected - got))
        sys.exit(1)
    print("docs_links self-test ok")


if __name__ == "__main__":
    if sys.argv[1] == "--self-test":
        self_test()
        sys.exit(0)
    os.chdir(sys.argv[1])
    docs = ["README.md", "DEVELOPERS.md", "slurm/README.md"] + sorted(glob.glob("docs/*.md"))
    bad = broken_links(docs)
    for line in bad:
        print("FAIL: " + line)
    if bad:
        sys.exit(1)
    print("documentation links ok")
