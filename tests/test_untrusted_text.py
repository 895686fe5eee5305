"""Untrusted text from a case file reaches the terminal escaped, and text that is not text
is refused at the loader (exit 2, located), never a crash."""
from __future__ import annotations

import pytest

pytest.importorskip("cantera")

from clitools import run  # noqa: E402

CASE = """\
title: "{title}"
system:
  source: packaged
  phases:
    {phase}: [H2, O2, H2O]
reactions: complete
feed: {{H2: 2, O2: 1}}
specified: {{temperature: 1500 K, pressure: 1 atm}}
"""


def write(tmp_path, title="steam from hydrogen (test)", phase="gas"):
    path = tmp_path / "case.yaml"
    path.write_text(CASE.format(title=title, phase=phase), encoding="utf-8")
    return path


def test_control_sequences_in_a_title_are_shown_as_escapes(tmp_path):
    # clear-screen (ESC [2J) and set-window-title (ESC ]0; ... BEL) written as YAML escapes
    path = write(tmp_path, title="burner \\e[2J\\e]0;pwned\\a trial")
    code, out, err = run(["check", str(path)])
    assert code == 0, err
    assert "\x1b" not in out and "\x07" not in out
    assert "burner \\x1b[2J\\x1b]0;pwned\\x07 trial" in out.splitlines()[0]
    code, out, _ = run(["check", str(path), str(path)])         # the one-line summaries too
    assert "\x1b" not in out


def test_control_characters_in_a_phase_name_are_escaped(tmp_path):
    path = write(tmp_path, phase='"gas\\e[31m"')
    code, out, err = run(["check", str(path)])
    assert "\x1b" not in out + err


def test_a_lone_surrogate_is_refused_where_it_is(tmp_path):
    path = write(tmp_path, title="bad \\ud800 title")
    report = tmp_path / "audit.html"
    code, out, err = run(["check", str(path), "--report", str(report)])
    assert code == 2 and not report.exists()
    assert err.startswith(f"auditor: error: {path}:1:8: title: this text holds a lone surrogate")
