"""No block of six or more identical lines stands twice in ``calwork/`` (the functions that
run are the ones that are tested: a copied block drifts from its original unnoticed).

Lines are compared stripped of indentation; blank lines, lone brackets, docstring quotes and
section rules (``----------``) and import statements are passed over, since they carry no logic
of their own. Overlapping windows of one copied stretch are reported once.
"""

from __future__ import annotations

import re
from collections import defaultdict
from pathlib import Path

PACKAGE = Path(__file__).resolve().parents[1] / "calwork"
BLOCK = 6
_THIN = re.compile(r"^[\s\-=)\]}(\[{,:]*$")


def _lines(path: Path) -> list[tuple[int, str]]:
    out = []
    for number, line in enumerate(path.read_text(encoding="utf-8").splitlines(), start=1):
        text = line.strip()
        if text and not _THIN.match(text) and text != '"""' and not text.startswith(
                ("import ", "from ")):
            out.append((number, text))
    return out


def repeated_blocks(files: list[Path], root: Path, block: int = BLOCK) -> list[str]:
    """``'a.py:10 and b.py:40: …'`` for each stretch of ``block`` lines standing twice."""
    seen: dict[tuple[str, ...], list[tuple[str, int]]] = defaultdict(list)
    first_line: dict[tuple[str, int], int] = {}
    for path in files:
        lines = _lines(path)
        name = str(path.relative_to(root))
        for i in range(len(lines) - block + 1):
            key = tuple(text for _, text in lines[i:i + block])
            seen[key].append((name, i))
            first_line[(name, i)] = lines[i][0]
    found, reported = [], set()
    for key, places in seen.items():
        if len(places) < 2:
            continue
        # one report per copied stretch: skip a window whose predecessors were reported
        if any((name, i - 1) in reported for name, i in places):
            reported.update(places)
            continue
        reported.update(places)
        found.append(" and ".join(f"{name}:{first_line[(name, i)]}" for name, i in places)
                     + f": {key[0][:60]!r} …")
    return sorted(found)


def test_no_block_of_six_lines_stands_twice():
    found = repeated_blocks(sorted(PACKAGE.rglob("*.py")), PACKAGE.parent)
    assert not found, "\n".join(found)


def test_the_check_finds_a_copied_block(tmp_path):
    body = "".join(f"x{i} = {i}\n" for i in range(7))
    (tmp_path / "a.py").write_text(body)
    (tmp_path / "b.py").write_text("y = 1\n" + body)
    (tmp_path / "c.py").write_text(body[:-7])  # only six of the lines: also a copy
    found = repeated_blocks(sorted(tmp_path.glob("*.py")), tmp_path)
    assert len(found) == 1
    assert "a.py:1" in found[0]
    assert "b.py:2" in found[0]
    assert "c.py:1" in found[0]
