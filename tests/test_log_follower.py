"""Following a file a logger appends to: complete lines only, restarts on truncation, replacement or
a rewrite, a missing file waited for."""
from __future__ import annotations

import os

from thermo_budget.logs.log_follower import LogFollower


def test_new_complete_lines_only_and_a_half_written_line_held_back(tmp_path):
    path = tmp_path / "log.csv"
    path.write_bytes(b"time_s,oil_C\n0,20.0\n5,20.")
    follower = LogFollower(path)
    first = follower.poll()
    assert first.lines == ["time_s,oil_C", "0,20.0"] and first.pending_bytes == 5
    with open(path, "ab") as handle:
        handle.write(b"4\n10,20.9\n")
    second = follower.poll()
    assert second.lines == ["5,20.4", "10,20.9"] and second.pending_bytes == 0 and second.restart is None
    assert follower.poll().lines == []


def test_truncation_replacement_and_rewrite_restart_from_the_start(tmp_path):
    path = tmp_path / "log.csv"
    path.write_text("time_s,oil_C\n0,20\n5,21\n10,22\n")
    follower = LogFollower(path)
    follower.poll()
    path.write_text("time_s,oil_C\n0,30\n")                          # truncated in place (shorter)
    poll = follower.poll()
    assert "truncated" in poll.restart and poll.lines == ["time_s,oil_C", "0,30"]
    other = tmp_path / "new.csv"
    other.write_text("time_s,oil_C\n0,40\n5,41\n")
    os.replace(other, path)                                          # a new file under the same name
    poll = follower.poll()
    assert "replaced" in poll.restart and poll.lines[-1] == "5,41"
    with open(path, "r+") as handle:                                 # same size or longer, new first bytes
        handle.write("time_s,oil_F\n0,99\n5,98\n10,97\n")
    poll = follower.poll()
    assert "rewritten" in poll.restart and poll.lines[0] == "time_s,oil_F"


def test_a_missing_file_is_waited_for(tmp_path):
    follower = LogFollower(tmp_path / "later.csv")
    assert follower.poll().missing
    (tmp_path / "later.csv").write_text("time_s,oil_C\n")
    assert follower.poll().lines == ["time_s,oil_C"]


def test_byte_order_mark_and_latin_1(tmp_path):
    path = tmp_path / "log.csv"
    path.write_bytes("\ufefftime_s,oil_C\n".encode("utf-8") + "# Öl\n".encode("latin-1"))
    assert LogFollower(path).poll().lines == ["time_s,oil_C", "# Öl"]
