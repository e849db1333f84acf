"""Reading the files a design names beside it (`read_beside`, used by `manage.py evaluate`): only regular
files inside the design file's folder, at most `max_bytes`, and never a wait on a pipe."""

import contextlib
import os
import signal
from pathlib import Path

import pytest

from rules.design import DesignError, parse_design
from rules.measurements import MeasurementPathError, attach_measurements, read_beside
from tests.rules.design_builders import design

ONE_PORT = "# MHz S RI R 50\n700 0.1 0\n800 0.1 0\n"
LIMIT = 1000


@contextlib.contextmanager
def at_most_seconds(seconds: int):
    """Fails the test instead of hanging it (a FIFO without a writer blocks an ordinary open())."""
    def give_up(signum, frame):
        raise TimeoutError(f"still reading after {seconds} s")

    previous = signal.signal(signal.SIGALRM, give_up)
    signal.alarm(seconds)
    try:
        yield
    finally:
        signal.alarm(0)
        signal.signal(signal.SIGALRM, previous)


@pytest.fixture
def folder(tmp_path) -> Path:
    (tmp_path / "design.json").write_text("{}")
    (tmp_path / "m.s1p").write_text(ONE_PORT)
    (tmp_path / "sub").mkdir()
    (tmp_path / "sub" / "n.s1p").write_text(ONE_PORT)
    return tmp_path


def reader(folder: Path):
    return read_beside(folder / "design.json", max_bytes=LIMIT)


def test_it_reads_a_file_beside_the_design_or_in_a_folder_below_it(folder):
    assert reader(folder)("m.s1p") == ONE_PORT
    assert reader(folder)("sub/n.s1p") == ONE_PORT
    assert reader(folder)("./sub/n.s1p") == ONE_PORT


@pytest.mark.parametrize(("name", "reason"), [
    ("/etc/hostname", "an absolute path"),
    ("../m.s1p", "'..'"),
    ("sub/../../m.s1p", "'..'"),
    ("m\x00.s1p", "NUL"),
    ("", "empty"),
])
def test_it_refuses_names_that_leave_the_folder(folder, name, reason):
    with pytest.raises(MeasurementPathError, match=reason):
        reader(folder)(name)


def test_it_refuses_a_symbolic_link_that_leads_out_of_the_folder(folder, tmp_path_factory):
    outside = tmp_path_factory.mktemp("elsewhere") / "secret.s1p"
    outside.write_text(ONE_PORT)
    (folder / "link.s1p").symlink_to(outside)
    with pytest.raises(MeasurementPathError, match="outside the design file's folder"):
        reader(folder)("link.s1p")


def test_it_refuses_a_device_a_folder_and_a_fifo_without_waiting(folder):
    (folder / "zero.s1p").symlink_to("/dev/zero")  # leads outside too; the device is refused either way
    os.mkfifo(folder / "pipe.s1p")
    with at_most_seconds(5):
        for name in ("zero.s1p", "sub", "pipe.s1p"):
            with pytest.raises(MeasurementPathError):
                reader(folder)(name)
    with pytest.raises(MeasurementPathError, match="not a regular file"):
        reader(folder)("pipe.s1p")


def test_it_refuses_a_file_over_the_size_limit(folder):
    (folder / "big.s1p").write_text(ONE_PORT + "!" * LIMIT)
    with pytest.raises(MeasurementPathError, match="expected at most 1 kB"):
        reader(folder)("big.s1p")


def test_a_refused_file_is_a_problem_named_by_its_path(folder):
    parsed = parse_design(design(measurements=[{"file": "../m.s1p", "ports": ["A"]},
                                               {"file": "m.s1p", "ports": ["A"]}]))
    with pytest.raises(DesignError) as raised:
        attach_measurements(parsed, reader(folder))
    assert [str(problem) for problem in raised.value.problems] == [
        "measurements[0].file: cannot read ../m.s1p: '..' leads out of the design file's folder; name a file "
        "in it or below it"]
