"""Progress output: drawn on a terminal only, never mixed into stdout."""

import io

from gnssrel import progress


class Terminal(io.StringIO):
    def isatty(self):
        return True


def test_silent_when_not_a_terminal():
    progress.configure(None)
    out = io.StringIO()
    assert list(progress.bar(range(5), "work", stream=out)) == [0, 1, 2, 3, 4]
    with progress.step("reading", stream=out):
        pass
    assert out.getvalue() == ""


def test_bar_on_a_terminal_counts_every_item():
    progress.configure(None)
    out = Terminal()
    assert sum(progress.bar(list(range(40)), "jackknife", stream=out)) == sum(range(40))
    text = out.getvalue()
    assert "jackknife [" in text and "40/40" in text and "done: 40 in" in text


def test_quiet_turns_it_off_even_on_a_terminal():
    progress.configure(False)
    out = Terminal()
    list(progress.bar(range(3), "work", stream=out))
    assert out.getvalue() == ""
    progress.configure(None)
