"""Replaces the text between two markers in a document with a new block.

Used by scripts/bench.sh and scripts/compare-lcms2.sh to record their
figures in docs/PERFORMANCE.md between `<!-- NAME:begin -->` and
`<!-- NAME:end -->`; the rest of the document is kept as it is.
"""

import sys


def record_block(doc, name, lines):
    """Writes `lines` framed by the markers of `name` into `doc` and prints the block."""
    begin, end = f"<!-- {name}:begin -->", f"<!-- {name}:end -->"
    block = "\n".join([begin, *lines, end])
    text = open(doc).read()
    if begin not in text or end not in text:
        sys.exit(f"{doc}: the markers {begin} and {end} are missing")
    head, rest = text.split(begin, 1)
    _, tail = rest.split(end, 1)
    open(doc, "w").write(head + block + tail)
    print(block)
