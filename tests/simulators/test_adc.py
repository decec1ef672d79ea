"""The ADC board simulator on a real pseudo-terminal, read with pyserial and the shared frame decoder."""

from __future__ import annotations

import json
import math
import os
import re
import statistics
import threading
import time
from collections.abc import Callable, Iterator

import pytest
import serial

from soaklog.errors import InputError
from soaklog.simulators.adc import FIRMWARE, MAKER, MODEL, AdcBoardSimulator
from soaklog.drivers.adcframe import (
    FLAG_CHANNEL_FAULT,
    FLAG_CONFIG_CHANGED,
    FLAG_STREAM_START,
    Frame,
    FrameDecoder,
    FrameError,
    Reply,
    counts_to_ohm,
    encode_command,
)
from soaklog.simulators.plant import OPEN_OHM, FixedPlant, Terminal

FS24 = 2**23
ONE_COUNT_OHM = 400.0 / FS24  # 47.7 µohm: the resolution against R_ref = 400 ohm at 24 bits
Record = Frame | Reply | FrameError


class RecordingPlant(FixedPlant):
    """A FixedPlant that remembers how each input was measured."""

    def __init__(self, *args: object, **kwargs: object) -> None:
        super().__init__(*args, **kwargs)  # type: ignore[arg-type]
        self.calls: list[tuple[str, int, float]] = []

    def terminal(self, channel: str, *, wiring: int, current_a: float) -> Terminal:
        self.calls.append((channel, wiring, current_a))
        return super().terminal(channel, wiring=wiring, current_a=current_a)


class Line:
    """One pyserial port on the board's pty, with the decoder and everything received.

    Records are handed out in order, each once: what one wait does not need
    stays queued for the next.
    """

    def __init__(self, path: str) -> None:
        # opening flushes the pty's input, so every frame read later left the
        # board after this moment
        self.opened_at = time.monotonic()
        self.port = serial.Serial(path, baudrate=115200, timeout=0.02)
        self.decoder = FrameDecoder()
        self.raw = bytearray()
        self.queue: list[Record] = []

    def pump(self) -> None:
        data = self.port.read(max(1, self.port.in_waiting))
        self.raw += data
        self.queue += self.decoder.feed(data)

    def until(self, done: Callable[[list[Record]], bool], timeout_s: float = 2.0) -> list[Record]:
        """Take records until ``done(records taken by this call)`` holds; fail at the deadline."""
        got: list[Record] = []
        deadline = time.monotonic() + timeout_s
        while not done(got):
            while not self.queue:
                assert time.monotonic() < deadline, f"gave up waiting after {timeout_s} s; got {got[-5:]}"
                self.pump()
            got.append(self.queue.pop(0))
        return got

    def frames(self, n: int, timeout_s: float = 2.0) -> list[Frame]:
        got = self.until(lambda rs: sum(isinstance(r, Frame) for r in rs) >= n, timeout_s)
        return [r for r in got if isinstance(r, Frame)]

    def reply(self) -> Reply:
        """The next reply; frames before it are dropped, records after it stay queued."""
        got = self.until(lambda rs: bool(rs) and isinstance(rs[-1], Reply))
        return got[-1]  # type: ignore[return-value]

    def ask(self, word: str, *args: str, checksum: bool = True) -> Reply:
        self.port.write(encode_command(word, *args, checksum=checksum))
        return self.reply()

    def quiet_for(self, quiet_s: float, timeout_s: float = 2.0) -> None:
        """Read and drop everything until nothing has arrived for ``quiet_s``."""
        deadline = time.monotonic() + timeout_s
        last = time.monotonic()
        while time.monotonic() - last < quiet_s:
            assert time.monotonic() < deadline, "the board never went quiet"
            if self.port.read(max(1, self.port.in_waiting)):
                last = time.monotonic()
        self.queue.clear()
        self.decoder = FrameDecoder()

    def read_until_lost(self, timeout_s: float = 2.0) -> None:
        """Read as a driver does (``read``) until the port fails; fail at the deadline."""
        deadline = time.monotonic() + timeout_s
        while time.monotonic() < deadline:
            self.port.read(256)
        pytest.fail(f"the port still reads after {timeout_s} s")


@pytest.fixture
def make() -> Iterator[Callable[..., tuple[AdcBoardSimulator, Line]]]:
    """Start boards and open ports on them; close all of it afterwards."""
    boards: list[AdcBoardSimulator] = []
    lines: list[Line] = []

    def factory(plant: FixedPlant, inputs: list[str | None], **kwargs: object) -> tuple[AdcBoardSimulator, Line]:
        kwargs = {"rate_hz": 50.0, "noise_counts": 0.0, "seed": 7} | kwargs
        board = AdcBoardSimulator(plant, inputs, **kwargs).start()  # type: ignore[arg-type]
        boards.append(board)
        line = Line(board.device_path)
        lines.append(line)
        return board, line

    yield factory
    for line in lines:
        line.port.close()
    for board in boards:
        board.close()


def consecutive(frames: list[Frame]) -> bool:
    return all((b.seq - a.seq) % 65536 == 1 for a, b in zip(frames, frames[1:]))


def plant4() -> RecordingPlant:
    return RecordingPlant(
        {
            "t100": 138.5055,  # IEC 60751:2008, 100 °C -> 138.5055 ohm (CVD value)
            "t0": 100.0,  # IEC 60751:2008 table 1: 0 °C -> 100.00 ohm
            "open": OPEN_OHM,
            "hot": 250.0,
        },
        lead_ohm=0.5,
    )


# ---------------------------------------------------------------- streaming


def test_frames_arrive_at_the_rate_and_follow_a_rate_change(make: Callable[..., tuple[AdcBoardSimulator, Line]]) -> None:
    _, line = make(plant4(), ["t0"], rate_hz=20.0)
    frames = line.frames(11)
    span_s = time.monotonic() - line.opened_at
    assert consecutive(frames)
    # the board clock steps 1000/20 = 50 ms per frame
    assert {b.tick_ms - a.tick_ms for a, b in zip(frames, frames[1:])} == {50}
    # eleven frames sent after the port opened span ten intervals of 50 ms
    assert 0.5 <= span_s < 2.0

    reply = line.ask("RATE", "50")
    assert reply == Reply("RATE", True, (("hz", "50"),))
    after = line.frames(6)
    # the reply comes before the first frame at the new rate, and that frame says so
    assert after[0].flags & FLAG_CONFIG_CHANGED
    assert not any(f.flags & FLAG_CONFIG_CHANGED for f in after[1:])
    assert {b.tick_ms - a.tick_ms for a, b in zip(after, after[1:])} == {20}  # 1000/50 ms


def test_counts_are_the_plant_resistances_at_three_wires(make: Callable[..., tuple[AdcBoardSimulator, Line]]) -> None:
    plant = plant4()
    _, line = make(plant, ["t100", "t0", "open", "hot", None])
    frame = line.frames(2)[-1]
    # worked by hand against R_ref = 400 ohm, 2^23 = 8 388 608:
    #   138.5055/400 · 2^23 = 2 904 670.86 -> 2 904 671;  100/400 · 2^23 = 2 097 152
    #   250/400 · 2^23 = 5 242 880; open and unconnected -> +full scale 8 388 607
    # the 0.5 ohm leads are not added: a 3-wire bridge cancels them
    assert frame.counts == (2_904_671, 2_097_152, FS24 - 1, 5_242_880, FS24 - 1)
    assert frame.codes == "GGOGO"
    assert frame.flags & FLAG_CHANNEL_FAULT
    for counts, ohm in zip(frame.counts[:2], (138.5055, 100.0)):
        assert abs(counts_to_ohm(counts, 400.0) - ohm) <= ONE_COUNT_OHM
    names = {c[0] for c in plant.calls}
    assert names == {"t100", "t0", "open", "hot"}
    assert {(w, a) for _, w, a in plant.calls} == {(3, 250e-6)}

    plant.set("t0", 120.0)
    # 120/400 · 2^23 = 2 516 582.4 -> 2 516 582
    line.until(lambda rs: any(isinstance(r, Frame) and r.counts[1] == 2_516_582 for r in rs))


def test_two_wire_board_includes_both_leads(make: Callable[..., tuple[AdcBoardSimulator, Line]]) -> None:
    _, line = make(plant4(), ["t0"], wiring=2)
    # 100 + 2 · 0.5 = 101 ohm; 101/400 · 2^23 = 2 118 123.52 -> 2 118 124
    assert line.frames(2)[-1].counts == (2_118_124,)
    assert line.ask("REF").get("wiring") == "2"


def test_time_scale_speeds_up_the_board_clock(make: Callable[..., tuple[AdcBoardSimulator, Line]]) -> None:
    _, line = make(plant4(), ["t0"], rate_hz=10.0, time_scale=5.0)
    frames = line.frames(11)
    span_s = time.monotonic() - line.opened_at
    assert {b.tick_ms - a.tick_ms for a, b in zip(frames, frames[1:])} == {100}  # board ms at 10 Hz
    # ten board intervals of 0.1 s at 5x are 0.2 s of wall clock (1 s unscaled)
    assert 0.2 <= span_s < 0.9


def test_noise_has_the_asked_spread(make: Callable[..., tuple[AdcBoardSimulator, Line]]) -> None:
    _, line = make(plant4(), ["t0"], noise_counts=5.0, time_scale=20.0)
    counts = [f.counts[0] for f in line.frames(200, timeout_s=4.0)]
    # the standard error of a sample standard deviation is about sigma/sqrt(2n)
    # = 0.25 counts here (from memory of the large-sample result for normal
    # data); the bounds are 6 of those; rounding adds 1/12 count² of variance
    assert 3.5 < statistics.stdev(counts) < 6.5
    assert abs(statistics.fmean(counts) - 2_097_152) < 2.0  # 5/sqrt(200) = 0.35 counts standard error


# ---------------------------------------------------------------- commands


def test_board_identifies_and_reports_its_reference(make: Callable[..., tuple[AdcBoardSimulator, Line]]) -> None:
    plant = plant4()
    _, line = make(plant, ["t100", "t0", "hot", "open"])
    who = line.ask("who", checksum=False)
    assert who.ok and who.command == "WHO"
    assert (who.get("maker"), who.get("model"), who.get("firmware")) == (MAKER, MODEL, FIRMWARE)
    assert who.get("serial")
    assert line.ask("CHANS") == Reply("CHANS", True, (("n", "4"),))
    ref = line.ask("REF")
    assert (float(ref.get("ohm") or "nan"), ref.get("bits"), float(ref.get("a") or "nan")) == (400.0, "24", 250e-6)
    assert ref.get("wiring") == "3"

    assert {a for _, _, a in plant.calls} == {250e-6}
    assert line.ask("EXC", "0.0001") == Reply("EXC", True, (("a", "0.0001"),))
    # frames after the reply are measured with the new current (it self-heats the sensors)
    assert line.frames(2)[0].flags & FLAG_CONFIG_CHANGED
    assert {a for _, _, a in plant.calls[-4:]} == {1e-4}


@pytest.mark.parametrize(
    ("words", "command"),
    [
        (("RATE", "99"), "RATE"),  # above 50 frames/s
        (("RATE", "0.05"), "RATE"),  # below 0.1 frames/s
        (("RATE", "fast"), "RATE"),
        (("EXC", "0.5"), "EXC"),
        (("WHO", "now"), "WHO"),
        (("BREW",), "BREW"),
    ],
)
def test_bad_commands_are_refused(
    make: Callable[..., tuple[AdcBoardSimulator, Line]], words: tuple[str, ...], command: str
) -> None:
    board, line = make(plant4(), ["t0"])
    reply = line.ask(*words)
    assert not reply.ok
    assert reply.command == command
    assert board.status()["rate_hz"] == 50.0


def test_a_command_with_a_wrong_checksum_is_refused(make: Callable[..., tuple[AdcBoardSimulator, Line]]) -> None:
    board, line = make(plant4(), ["t0"])
    good = encode_command("RATE", "5")
    bad = good[:-3] + (b"0" if good[-3:-2] != b"0" else b"1") + b"\r\n"  # last CRC digit changed
    line.port.write(bad)
    reply = line.reply()
    assert (reply.command, reply.ok) == ("RATE", False)
    assert "checksum" in reply.message
    assert board.status()["rate_hz"] == 50.0


def test_halt_stops_the_stream_and_go_restarts_it(make: Callable[..., tuple[AdcBoardSimulator, Line]]) -> None:
    _, line = make(plant4(), ["t0"], streaming=False)
    assert line.ask("GO") == Reply("GO", True, (("streaming", "1"),))
    first = line.frames(1)[0]
    assert first.flags & FLAG_STREAM_START
    assert line.ask("HALT") == Reply("HALT", True, (("streaming", "0"),))
    line.quiet_for(0.15)  # 7 frame periods at 50 Hz
    assert line.ask("CHANS").ok  # still answering
    line.ask("GO")
    assert line.frames(1)[0].flags & FLAG_STREAM_START


# ---------------------------------------------------------------- faults


def test_badsum_frames_are_rejected_and_counted(make: Callable[..., tuple[AdcBoardSimulator, Line]]) -> None:
    board, line = make(plant4(), ["t0"])
    before = line.frames(1)
    assert board.commands().execute("fault badsum 3") == "ok badsum 3"
    got = line.until(
        lambda rs: sum(getattr(r, "reason", "") == "checksum" for r in rs) >= 3
        and sum(isinstance(r, Frame) for r in rs[-3:]) == 3
    )
    assert sum(getattr(r, "reason", "") == "checksum" for r in got) == 3
    assert all(r.reason == "checksum" for r in got if isinstance(r, FrameError))
    frames = before + [r for r in got if isinstance(r, Frame)]
    gaps = [(b.seq - a.seq) % 65536 for a, b in zip(frames, frames[1:])]
    assert sorted(gaps) == [1] * (len(gaps) - 1) + [4]  # three frames lost, none faked
    assert json.loads(board.commands().execute("status")[3:])["faults"] == []


def test_partial_frames_are_all_recovered(make: Callable[..., tuple[AdcBoardSimulator, Line]]) -> None:
    board, line = make(plant4(), ["t0"])
    line.frames(1)
    board.fault_partial()
    start = len(line.raw)
    got = line.until(
        lambda rs: re.search(rb"~[0-9A-F]{4}@", line.raw[start:]) is not None
        and sum(isinstance(r, Frame) for r in rs) >= 10,
        timeout_s=4.0,
    )
    assert not [r for r in got if isinstance(r, FrameError)]
    assert consecutive([r for r in got if isinstance(r, Frame)])


def test_garbage_between_frames_costs_no_frame(make: Callable[..., tuple[AdcBoardSimulator, Line]]) -> None:
    board, line = make(plant4(), ["t0", "t100"])
    line.frames(1)
    board.fault_garbage()
    start = len(line.raw)
    got = line.until(
        lambda rs: any(b >= 0x80 for b in line.raw[start:]) and sum(isinstance(r, Frame) for r in rs) >= 10,
        timeout_s=4.0,
    )
    frames = [r for r in got if isinstance(r, Frame)]
    assert consecutive(frames)
    assert all(f.counts == (2_097_152, 2_904_671) for f in frames)
    assert any(isinstance(r, FrameError) for r in got)
    board.clear()
    line.frames(2)  # the frame in flight at the clear may still carry garbage
    assert not [r for r in line.until(lambda rs: sum(isinstance(r, Frame) for r in rs) >= 5) if isinstance(r, FrameError)]


def test_mute_sends_nothing_and_answers_nothing(make: Callable[..., tuple[AdcBoardSimulator, Line]]) -> None:
    board, line = make(plant4(), ["t0"])
    line.frames(1)
    assert board.commands().execute("fault mute") == "ok mute"
    line.quiet_for(0.1)
    line.port.write(encode_command("WHO"))
    deadline = time.monotonic() + 0.3  # 15 frame periods at 50 Hz
    while time.monotonic() < deadline:
        assert line.port.read(max(1, line.port.in_waiting)) == b""
    assert board.commands().execute("clear") == "ok cleared"
    assert line.frames(1)[0].flags & FLAG_STREAM_START
    assert line.ask("CHANS").ok


def test_vanish_raises_on_read_and_clear_brings_a_new_port(make: Callable[..., tuple[AdcBoardSimulator, Line]]) -> None:
    board, line = make(plant4(), ["t0"])
    line.frames(1)
    old_path = board.device_path
    board.commands().execute("fault vanish")
    with pytest.raises(serial.SerialException):
        line.read_until_lost()
    assert json.loads(board.commands().execute("status")[3:])["faults"] == ["vanish"]
    board.clear()
    assert board.device_path != old_path  # the old pts is still held open by our first port
    again = Line(board.device_path)
    try:
        assert again.frames(2)
        assert again.ask("CHANS").ok
    finally:
        again.port.close()


def test_link_path_follows_the_board_through_a_vanish(
    make: Callable[..., tuple[AdcBoardSimulator, Line]], tmp_path: os.PathLike[str]
) -> None:
    link = os.path.join(tmp_path, "adc0")
    board, line = make(plant4(), ["t0"], link_path=link)
    assert os.path.realpath(link) == board.device_path
    line.port.close()
    port = Line(link)
    port.frames(1)
    board.fault_vanish()
    assert not os.path.lexists(link)
    with pytest.raises(serial.SerialException):
        port.read_until_lost()
    port.port.close()
    board.clear()
    port = Line(link)
    try:
        assert port.frames(1)
    finally:
        port.port.close()


def test_control_table_reports_and_refuses(make: Callable[..., tuple[AdcBoardSimulator, Line]]) -> None:
    board, _ = make(plant4(), ["t0"])
    table = board.commands()
    assert table.names() == ["clear", "fault", "status"]
    assert table.execute("fault garbage") == "ok garbage"
    assert table.execute("fault partial") == "ok partial"
    status = json.loads(table.execute("status")[3:])
    assert status["faults"] == ["garbage", "partial"]
    assert status["device_path"] == board.device_path
    assert table.execute("clear garbage") == "ok cleared garbage"
    assert json.loads(table.execute("status")[3:])["faults"] == ["partial"]
    assert table.execute("fault sparks").startswith("error ")
    assert table.execute("fault badsum zero").startswith("error ")
    assert table.execute("fault badsum 0").startswith("error ")
    assert table.execute("fault mute now").startswith("error ")
    assert table.execute("clear sparks").startswith("error ")
    assert table.execute("fault badsum") == "ok badsum"
    assert json.loads(table.execute("status")[3:])["badsum_remaining"] is None
    assert board.active_faults() == ["badsum", "partial"]
    board.clear_faults()
    assert board.active_faults() == []


# ---------------------------------------------------------------- construction and clean-up


@pytest.mark.parametrize(
    "kwargs",
    [
        {"rate_hz": 0.05},
        {"rate_hz": 51.0},
        {"rate_hz": math.nan},
        {"wiring": 5},
        {"reference_ohm": 0.0},
        {"excitation_a": 0.1},
        {"bits": 32},
        {"noise_counts": -1.0},
        {"time_scale": 0.0},
        {"serial_number": "two words"},
    ],
)
def test_bad_settings_are_refused(kwargs: dict[str, object]) -> None:
    with pytest.raises(InputError):
        AdcBoardSimulator(plant4(), ["t0"], **kwargs)  # type: ignore[arg-type]


@pytest.mark.parametrize("inputs", [[], ["nope"], ["t0"] * 65])
def test_bad_channel_maps_are_refused(inputs: list[str]) -> None:
    with pytest.raises(InputError):
        AdcBoardSimulator(plant4(), inputs)


def test_close_leaves_no_descriptor_and_no_thread() -> None:
    fds_before = set(os.listdir("/proc/self/fd"))
    board = AdcBoardSimulator(plant4(), ["t0"], rate_hz=50.0).start()
    line = Line(board.device_path)
    line.frames(1)
    board.fault_vanish()
    board.clear()  # a second pty comes and goes too
    line.port.close()
    board.close()
    board.close()
    assert set(os.listdir("/proc/self/fd")) == fds_before
    assert not [t for t in threading.enumerate() if t.name.startswith("adc-")]
    with pytest.raises(InputError):
        board.start()


def test_a_board_never_started_closes_cleanly() -> None:
    fds_before = set(os.listdir("/proc/self/fd"))
    AdcBoardSimulator(plant4(), ["t0"]).close()
    assert set(os.listdir("/proc/self/fd")) == fds_before
