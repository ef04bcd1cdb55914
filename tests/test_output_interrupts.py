"""Temporary files and folders of atomic outputs are never left behind by Ctrl-C or
SIGTERM, even when the signal lands just as the temporary is made (common practice of
safe file replacement: write beside the target, rename, delete on any failure)."""

from __future__ import annotations

import os
import signal
import sys
import tempfile

import pytest

from faciesseq._output import new_folder, signals_held, write_file

pytestmark = pytest.mark.skipif(sys.platform == "win32", reason="no SIGTERM to send")


@pytest.mark.parametrize("other_thread", [False, True])
def test_a_signal_inside_the_held_block_is_delivered_when_it_ends(other_thread):
    # whichever thread the kernel gives it to: with another thread alive (as threads
    # of earlier parallel work may be) a signal held in the main thread alone would
    # reach Python through the other one
    import threading

    done = threading.Event()
    worker = threading.Thread(target=done.wait)
    if other_thread:
        worker.start()
    seen = []
    previous = signal.signal(signal.SIGTERM, lambda *_: seen.append("term"))
    try:
        with signals_held():
            os.kill(os.getpid(), signal.SIGTERM)
            for _ in range(1000):  # give a handler every chance to run here
                pass
            inside = list(seen)
        assert inside == [] and seen == ["term"]
    finally:
        signal.signal(signal.SIGTERM, previous)
        done.set()
        if other_thread:
            worker.join()


def _interrupting(make):
    """``make`` (mkdtemp or mkstemp) that sends this process Ctrl-C as it returns."""

    def made(*args, **kwargs):
        out = make(*args, **kwargs)
        os.kill(os.getpid(), signal.SIGINT)
        return out

    return made


def test_ctrl_c_as_the_temporary_folder_is_made_leaves_nothing(tmp_path, monkeypatch):
    monkeypatch.setattr(tempfile, "mkdtemp", _interrupting(tempfile.mkdtemp))
    with pytest.raises(KeyboardInterrupt), new_folder(tmp_path / "out") as folder:
        (folder / "a.csv").write_text("x\n")
    assert list(tmp_path.iterdir()) == []


def test_ctrl_c_as_the_temporary_file_is_made_leaves_nothing(tmp_path, monkeypatch):
    (tmp_path / "model.json").write_text("old\n")
    monkeypatch.setattr(tempfile, "mkstemp", _interrupting(tempfile.mkstemp))
    with pytest.raises(KeyboardInterrupt):
        write_file(tmp_path / "model.json", "new\n")
    assert [p.name for p in tmp_path.iterdir()] == ["model.json"]
    assert (tmp_path / "model.json").read_text() == "old\n"


def test_a_folder_left_by_a_run_killed_with_sigkill_goes_with_the_next_run(tmp_path):
    # SIGKILL reaches no handler: the folder being built stayed beside OUT for good
    import socket
    import subprocess

    out = tmp_path / "decoded"
    code = (
        "import sys, time\n"
        "from faciesseq._output import new_folder\n"
        "with new_folder(sys.argv[1]) as temp:\n"
        "    (temp / 'tracts.csv').write_text('half')\n"
        "    print(temp.name, flush=True)\n"
        "    time.sleep(60)\n"
    )
    run = subprocess.Popen(
        [sys.executable, "-c", code, str(out)], stdout=subprocess.PIPE, text=True
    )
    left = run.stdout.readline().strip()
    run.kill()
    run.wait()
    run.stdout.close()
    assert left.startswith(f".decoded.new.{run.pid}@{socket.gethostname()}.")
    host = socket.gethostname()
    kept = [  # a live process's folder, another host's, another output's
        tmp_path / f".decoded.new.{os.getpid()}@{host}.abcd1234",
        tmp_path / f".decoded.new.{run.pid}@elsewhere.abcd1234",
        tmp_path / f".other.new.{run.pid}@{host}.abcd1234",
    ]
    for folder in kept:
        folder.mkdir()
    with new_folder(out) as temp:
        assert not (tmp_path / left).exists()
        (temp / "tracts.csv").write_text("whole")
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted(
        ["decoded", *(p.name for p in kept)]
    )
