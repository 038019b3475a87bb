"""Tests of anisotropy.progress: the one progress protocol.

Terminal detection is the stream's own ``isatty``; the bar itself is tqdm's
(the reference library), read back from what it wrote.
"""

import io
import sys

from anisotropy import progress as P


class _Terminal(io.StringIO):
    def isatty(self):
        return True


def test_note_goes_where_progress_says(capsys):
    P.note(False, "quiet")
    P.note(None, "quiet")
    assert capsys.readouterr().err == ""
    P.note(True, "pair engine: about 10 pairs")
    assert capsys.readouterr().err == "pair engine: about 10 pairs\n"
    lines = []
    P.note(lines.append, "one line")
    assert lines == ["one line"] and capsys.readouterr().err == ""
    out = io.StringIO()
    P.note(True, "to a named stream", stream=out)
    assert out.getvalue() == "to a named stream\n"


def test_bar_is_quiet_without_a_terminal(capsys):
    assert not P.is_terminal(io.StringIO())
    with P.Bar(True, 3, "bootstrap") as bar:
        for _ in range(3):
            bar.update()
    assert bar.done == 3
    assert capsys.readouterr().err == ""


def test_bar_sends_one_closing_line_to_a_callable():
    lines = []
    with P.Bar(lines.append, 4, "bootstrap") as bar:
        bar.update(3)
        bar.update()
    assert len(lines) == 1 and lines[0].startswith("bootstrap: 4/4 in ")


def test_bar_draws_with_tqdm_on_a_terminal(monkeypatch):
    term = _Terminal()
    monkeypatch.setattr(sys, "stderr", term)
    assert P.is_terminal()
    with P.Bar(True, 5, "replicates") as bar:
        bar.update(5)
    text = term.getvalue()
    assert "replicates" in text and "5/5" in text
