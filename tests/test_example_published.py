"""The published-model example (examples/published-2003/run.py) runs, and the README's
walkthrough quotes what it prints, line for line, so that the README cannot go stale.

Source: the published global model in ../shared/data/global-plates-2003 (see its
ATTRIBUTION.md); the expected lines are the README's own, checked against the tool's output
(a consistency check, common practice, no source).
"""

import importlib.util
import re
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
EXAMPLE = ROOT / "examples" / "published-2003" / "run.py"
MODEL = ROOT.parent / "shared" / "data" / "global-plates-2003"


def _example():
    spec = importlib.util.spec_from_file_location("published_example", EXAMPLE)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


def _quoted_lines():
    """The output lines the README's walkthrough quotes (commands and elided lines left
    out; the model's folder is written ``...`` there)."""
    text = (ROOT / "README.md").read_text()
    start = text.index("## Using a published plate model")
    section = text[start:text.index("\n## ", start + 5)]
    lines = []
    for block in re.findall(r"```\n(.*?)```", section, flags=re.S):
        for line in block.splitlines():
            line = line.rstrip()
            if line and not line.startswith("$") and line != "...":
                lines.append(line)
    return lines


@pytest.mark.skipif(not (MODEL / "world.toml").is_file(), reason="no published model here")
def test_the_readme_quotes_what_the_example_prints(tmp_path):
    got = _example().run(MODEL, tmp_path, maps=False)
    assert all(status == 0 for status, _, _ in got.values()), got
    printed = {line.rstrip().replace(str(MODEL), "...") for _, out, err in got.values()
               for line in (out + err).splitlines()}
    quoted = _quoted_lines()
    assert len(quoted) > 20
    stale = [line for line in quoted if line not in printed]
    assert not stale, "README lines the example no longer prints:\n" + "\n".join(stale)
    assert (tmp_path / "transcript.txt").read_text().count("(status 0)") == len(got)


def test_without_the_model_the_example_says_so(tmp_path):
    assert _example().run(tmp_path / "absent", tmp_path / "out") is None


@pytest.mark.skipif(not (MODEL / "world.toml").is_file(), reason="no published model here")
def test_notes_are_summarised_and_each_message_is_said_once(cli, tmp_path):
    # 52 plates' "half rate" notes make one line; --verbose shows every one; the JSON
    # keeps them all; the circular-ages message comes once, as a warning on stderr
    # (common practice, no source)
    import json
    argv = (MODEL / "world.toml", ROOT / "examples" / "published-2003" / "hypotheses" /
            "ridge_slab_drag.toml", MODEL / "motions_G01_fixed.csv", "--free-frame",
            "--no-profile", "-o", tmp_path / "f.json")
    code, out, err = cli("fit", *argv)
    assert code == 0
    notes = [l for l in out.splitlines() if l.startswith("note:")]
    assert len(notes) <= 6 and any("on 51 plates or terms" in n for n in notes)
    assert "partly circular" not in out and err.count("partly circular") == 1
    kept = json.loads((tmp_path / "f.json").read_text())["notes"]
    assert sum("half rate" in n for n in kept) == 51
    code, out, _ = cli("fit", *argv, "--verbose")
    assert sum("half rate" in l for l in out.splitlines()) == 51
