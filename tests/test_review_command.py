"""`thermofolio review`: the review is recorded in the file, layout kept, tied to content."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from generator.cli import main
from generator.review_edit import ReviewError, review_text
from generator.yamlsource import parse_yaml_text

COMMENTED = """# Water vapour, kept for the test.   (a header comment)
ref: codata-1989
id: water-gas
formula: H2O   # trailing comment
phase: g
name: water vapour
standard:
  dfH: "-241.826 ± 0.040 kJ/mol"
  S: "188.835 ± 0.010 J/(mol*K)"
cp:
  - constant: 33.6
    T: [298.15,
        1500]        # a flow list across two lines
review:
  status: draft   # keep this comment
  by: "A. Person"
  date: "2026-01-05"
  note: "entered from memory"
# a comment between blocks
notes: |
  Some text.
"""


def _check_json(root: Path, capsys) -> list[dict]:
    capsys.readouterr()
    main(["check", str(root), "--format", "json"])
    return json.loads(capsys.readouterr().out)["findings"]


def test_review_records_and_keeps_the_layout(mini: Path, capsys):
    f = mini / "species" / "water-gas.yaml"
    f.write_text(COMMENTED)
    rc = main(["review", "water-gas", "--status", "approved", "--by", "J. Doe", "--note",
               "checked against print", "--date", "2026-10-02", "--sources", str(mini)])
    assert rc == 0
    out = capsys.readouterr().out
    assert "approved 2026-10-02 by J. Doe; content digest" in out
    new = f.read_text()
    old_lines, new_lines = COMMENTED.splitlines(), new.splitlines()
    i = old_lines.index("review:")
    assert new_lines[:i] == old_lines[:i]  # everything before the block, byte for byte
    assert new_lines[-3:] == old_lines[-3:]  # the comment and notes after it
    assert "# keep this comment" in new
    doc, fs = parse_yaml_text(new, "t")
    assert not fs
    assert doc["review"] == {"status": "approved", "by": "J. Doe", "date": "2026-10-02",
                             "note": "checked against print",
                             "digest": doc["review"]["digest"]}
    assert len(doc["review"]["digest"]) == 16
    assert not [x for x in _check_json(mini, capsys) if x["code"].startswith("review-")]


def test_changed_content_is_reported_by_check(mini: Path, capsys):
    assert main(["review", "water-gas", "--status", "checked", "--by", "J. Doe", "--date",
                 "2026-10-02", "--sources", str(mini)]) == 0
    f = mini / "species" / "water-gas.yaml"
    f.write_text(f.read_text().replace("-241.826", "-241.9"))
    found = [x for x in _check_json(mini, capsys) if x["code"] == "review-changed-since"]
    assert len(found) == 1 and found[0]["item"] == "water-gas"
    assert "checked 2026-10-02 by J. Doe; changed since" in found[0]["message"]
    assert main(["check", str(mini)]) == 0  # a warning, not an error


def test_stale_review_is_reported_by_check(mini: Path, capsys, monkeypatch):
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1767225600")  # 2026-01-01T00:00:00Z
    assert main(["review", "burning", "--status", "approved", "--by", "J. Doe", "--sources",
                 str(mini), "--date", "2024-12-31"]) == 0
    found = [x for x in _check_json(mini, capsys) if x["code"] == "review-stale"]
    assert [x["item"] for x in found] == ["burning"]  # 366 days > the default 365
    # without --date the review is dated by SOURCE_DATE_EPOCH
    assert main(["review", "burning", "--status", "approved", "--by", "J. Doe", "--sources",
                 str(mini)]) == 0
    assert 'date: "2026-01-01"' in (mini / "reactions" / "burning.yaml").read_text()


def test_file_without_review_block_gets_one_before_notes(mini: Path):
    f = mini / "species" / "oxygen.yaml"
    f.write_text(f.read_text() + "notes: |\n  Text.\n")
    assert main(["review", str(f), "--status", "checked", "--by", "J. Doe", "--date",
                 "2026-10-02"]) == 0
    text = f.read_text()
    assert text.index("review:") < text.index("notes:")


def test_unknown_item_and_bad_input(mini: Path, capsys):
    assert main(["review", "unobtainium", "--status", "checked", "--by", "J", "--sources",
                 str(mini)]) == 1
    assert "no species or reaction" in capsys.readouterr().err
    with pytest.raises(SystemExit) as exc:
        main(["review", "water-gas", "--status", "perfect", "--by", "J"])
    assert exc.value.code == 2
    with pytest.raises(ReviewError):
        review_text("id: x\n", "t", "checked", "J", "2026-13-01")
    with pytest.raises(ReviewError):
        review_text("- a list\n", "t", "checked", "J", "2026-01-01")
