"""The README speaks to its reader, not to the project's tracker: no issue numbers, commit
hashes or "before this change" (common practice, no source)."""

import re
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
TRACKER = re.compile(r"\bissues?\s+#?\d+|\bissue's\b|\bcommit\s+[0-9a-f]{7,}\b|"
                     r"\bbefore this (change|work)\b|\bthe code before\b", re.I)


def test_the_readme_has_no_tracker_words():
    text = (ROOT / "README.md").read_text()
    hits = [f"line {text.count(chr(10), 0, m.start()) + 1}: {m.group(0)}"
            for m in TRACKER.finditer(text)]
    assert not hits, hits


def test_the_pattern_finds_what_it_is_for():
    for words in ("before issue 13", "commit 3f69a88", "the code before this change",
                  "Each issue's benchmark"):
        assert TRACKER.search(words), words
    assert not TRACKER.search("a stage series recommends by the same rule")
