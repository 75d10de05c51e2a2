"""Progress bars (issue 14, item 2): on stderr only when it is a terminal, never with
--quiet, and named for the step they show (common practice, no source: a tool's progress
goes to stderr so that stdout stays its result)."""

import io

import pytest

from torque import progress

from .conftest import here

DEMO = here().parent / "polygons_demo"


class Terminal(io.StringIO):
    """A stream that says it is a terminal."""

    def isatty(self):
        return True


@pytest.fixture
def terminal():
    screen = Terminal()
    progress._state["stream"] = screen
    yield screen
    progress._state["stream"] = None


def test_a_bar_shows_on_a_terminal_and_not_elsewhere(terminal):
    with progress.bar(3, "counting") as b:
        for _ in range(3):
            b.update()
    assert "counting" in terminal.getvalue()
    progress._state["stream"] = io.StringIO()          # a pipe or a file
    assert not progress.shown(3)
    with progress.bar(3, "counting") as b:
        b.update()
    assert progress._state["stream"].getvalue() == ""


def test_quiet_and_small_work_show_nothing(terminal):
    progress.set_quiet(True)
    try:
        with progress.task("reading"):
            pass
    finally:
        progress.set_quiet(False)
    with progress.bar(5, "short loop", minimum=200) as b:
        b.update()
    assert terminal.getvalue() == ""


def test_commands_name_their_steps_and_quiet_silences_them(terminal, cli, tmp_path):
    args = ("rank", DEMO / "world.toml", DEMO / "motions.csv",
            DEMO / "hypotheses" / "ridge_drag.toml", DEMO / "hypotheses" / "slab_drag.toml")
    from torque.workflows import forget_inputs
    forget_inputs()                 # an earlier test in this process may have read the world
    status, out, err = cli(*args)
    assert status == 0
    shown = terminal.getvalue()
    assert "reading and checking world.toml" in shown
    assert "fitting and cross-validating hypotheses" in shown
    assert "fitting" not in out and "fitting" not in err       # stdout stays the result
    terminal.seek(0)
    terminal.truncate()
    for argv in (("-q",) + args, args + ("--quiet",)):
        assert cli(*argv)[0] == 0
    assert terminal.getvalue() == ""
    assert not progress.is_quiet()                            # restored after the command
