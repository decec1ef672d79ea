"""The serial ADC board driver on a real pseudo-terminal with the board simulator, through pyserial."""

from __future__ import annotations

import math
import os
import select
import socket
import threading
import time
from collections.abc import Callable, Iterator

import pytest
import serial
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from testkit import ManualClock, closing_all

from soaklog.clock import SystemClock
from soaklog.config import StationConfig, parse_config
from soaklog.errors import ConnectionLost, InputError, InstrumentTimeout
from soaklog.drivers.base import STATUSES, RawReading
from soaklog.drivers.serial_adc import AdcStream, SerialAdc
from soaklog.simulators.adc import MAKER, MODEL, AdcBoardSimulator
from soaklog.drivers.adcframe import Frame, encode_command, encode_frame
from soaklog.simulators.plant import OPEN_OHM, FixedPlant

FS24 = 2**23
# the board protocol (simulators/adcframe.py): counts = floor(R / R_ref · 2^23 + 0.5),
# R = counts / 2^23 · R_ref; one count against R_ref = 400 ohm is 400 / 2^23 = 47.7 µohm
ONE_COUNT_OHM = 400.0 / FS24

# IEC 60751:2008 table 1: 0 °C -> 100.00 ohm; 100 °C -> 138.5055 ohm (the CVD value,
# 100 · (1 + 100 A + 100² B) with A = 3.9083e-3, B = -5.775e-7)
R_0C = 100.0
R_100C = 138.5055
# from memory of IEC 60751:2008 table 1: -40 °C -> 84.27 ohm (CVD with C: 84.2707)
R_M40C = 84.2707

Board = AdcBoardSimulator


def adc_ohm(r_ohm: float, reference_ohm: float = 400.0, bits: int = 24) -> float:
    """What the board reports for ``r_ohm``, worked from the protocol's formula (not from the code under test)."""
    fs = 2 ** (bits - 1)
    return math.floor(r_ohm / reference_ohm * fs + 0.5) / fs * reference_ohm


def plant() -> FixedPlant:
    return FixedPlant({"t0": R_0C, "t100": R_100C, "tm40": R_M40C, "open": OPEN_OHM, "hot": 500.0, "neg": -500.0})


@pytest.fixture
def boards() -> Iterator[Callable[..., Board]]:
    def factory(inputs: list[str | None], **kwargs: object) -> Board:
        kwargs = {"rate_hz": 50.0, "noise_counts": 0.0, "seed": 11, "plant": plant()} | kwargs
        return AdcBoardSimulator(kwargs.pop("plant"), inputs, **kwargs).start()  # type: ignore[arg-type]

    with closing_all(factory) as make:
        yield make


@pytest.fixture
def drivers() -> Iterator[Callable[..., SerialAdc]]:
    def factory(port: str, inputs: list[str], **kwargs: object) -> SerialAdc:
        kwargs = {"timeout_s": 0.3, "rate_hz": 50.0, "backoff": (0.05, 0.2)} | kwargs
        return SerialAdc("adc1", port, inputs, **kwargs)  # type: ignore[arg-type]

    with closing_all(factory) as make:
        yield make


def paced(driver: SerialAdc, interval_s: float = 0.05) -> Iterator[list[RawReading]]:
    """Scans at a fixed interval as the service makes them: a slow scan skips slots, never bunches them."""
    clock, stop = SystemClock(), threading.Event()
    t0 = clock.monotonic_s()
    k = 0
    while True:
        clock.wait_until(t0 + k * interval_s, stop)
        scan = driver.read_scan()
        k = max(k + 1, int((clock.monotonic_s() - t0) // interval_s) + 1)
        yield scan


def scan_until(
    driver: SerialAdc, done: Callable[[list[RawReading]], bool], timeout_s: float = 3.0
) -> tuple[list[RawReading], list[list[RawReading]]]:
    """Scan until ``done(scan)``; returns that scan and every one before it; fails at the deadline."""
    before: list[list[RawReading]] = []
    deadline = time.monotonic() + timeout_s
    for scan in paced(driver):
        if done(scan):
            return scan, before
        before.append(scan)
        assert time.monotonic() < deadline, f"gave up after {timeout_s} s; last scan {scan}"
    raise AssertionError("unreachable")


def some_scans(driver: SerialAdc, n: int) -> list[list[RawReading]]:
    return [scan for scan, _ in zip(paced(driver), range(n))]


def statuses(scan: list[RawReading]) -> set[str]:
    return {r.status for r in scan}


def all_ok(scan: list[RawReading]) -> bool:
    return statuses(scan) == {"ok"}


# ---------------------------------------------------------------- construction


def test_constructor_does_no_io() -> None:
    driver = SerialAdc("adc1", "/dev/does-not-exist-0", ["0", "3"])
    h = driver.health()
    assert h["connected"] is False
    assert h["connect_attempts"] == 0
    assert h["identity"] == ""
    driver.close()


@pytest.mark.parametrize(
    ("args", "kwargs"),
    [
        (("", "/dev/ttyACM0", ["0"]), {}),
        (("adc1", "", ["0"]), {}),
        (("adc1", "/dev/ttyACM0", []), {}),
        (("adc1", "/dev/ttyACM0", ["x"]), {}),
        (("adc1", "/dev/ttyACM0", ["-1"]), {}),
        (("adc1", "/dev/ttyACM0", ["64"]), {}),  # adcframe: 1…64 inputs, numbered from 0
        (("adc1", "/dev/ttyACM0", ["1", "01"]), {}),  # the same input twice
        (("adc1", "/dev/ttyACM0", ["0"]), {"bits": 32}),  # adcframe carries 8…24-bit counts
        (("adc1", "/dev/ttyACM0", ["0"]), {"wiring": 5}),
        (("adc1", "/dev/ttyACM0", ["0"]), {"timeout_s": 0.0}),
        (("adc1", "/dev/ttyACM0", ["0"]), {"reference_ohm": math.nan}),
        (("adc1", "/dev/ttyACM0", ["0"]), {"rate_hz": -1.0}),
        (("adc1", "/dev/ttyACM0", ["0"]), {"backoff": (2.0, 1.0)}),
        (("adc1", "/dev/ttyACM0", ["0"]), {"baudrate": 0}),
    ],
)
def test_bad_settings_are_refused(args: tuple[object, ...], kwargs: dict[str, object]) -> None:
    with pytest.raises(InputError):
        SerialAdc(*args, **kwargs)  # type: ignore[arg-type]


def _station(instrument: str, inputs: tuple[str, ...]) -> StationConfig:
    chans = "".join(
        f'[[channel]]\nname = "c{i}"\ninstrument = "adc2"\ninput = "{i}"\nsensor = "pt"\nwiring = 4\n' for i in inputs
    )
    return parse_config(
        f'[station]\nname = "t"\n[[instrument]]\nname = "adc2"\ndriver = "serial-adc"\n{instrument}\n'
        f'[[sensor]]\nname = "pt"\nclass = "A"\n{chans}'
    )


def test_the_serial_adc_kind_carries_the_instrument_settings_to_the_driver() -> None:
    cfg = _station('interval = "0.5s"\ntimeout = "1.5s"\nport = "socket://127.0.0.1:9"\nbaudrate = 57600\n'
                   'wiring = 4\nreference_ohm = 390.0\nbits = 20\nexcitation_ma = 0.1', ("2", "0"))
    inst = cfg.instruments[0]
    driver = inst.kind.driver(inst, SystemClock(), cfg.channels)
    assert isinstance(driver, SerialAdc)
    assert (driver.name, driver.port, driver.inputs) == ("adc2", "socket://127.0.0.1:9", ("2", "0"))
    assert (driver.baudrate, driver.timeout_s, driver.wiring) == (57600, 1.5, 4)
    assert (driver.reference_ohm, driver.bits, driver.excitation_a) == (390.0, 20, 1e-4)
    assert driver.rate_hz == 4.0  # two frames per 0.5 s scan interval


# ---------------------------------------------------------------- on the pty


def test_open_identifies_and_sets_up_the_board(boards: Callable[..., Board], drivers: Callable[..., SerialAdc]) -> None:
    board = boards(["t0"], rate_hz=5.0)
    driver = drivers(board.device_path, ["0"], rate_hz=40.0, excitation_a=1e-4)
    driver.open()
    h = driver.health()
    assert h["connected"] is True
    assert str(h["identity"]).startswith(f"{MAKER} {MODEL} serial=")
    # the settings asked for are the board's now, and the driver reports what the board says
    status = board.status()
    assert (status["rate_hz"], status["excitation_a"]) == (40.0, 1e-4)
    assert (h["rate_hz"], h["excitation_a"], h["reference_ohm"], h["bits"]) == (40.0, 1e-4, 400.0, 24)
    assert status["streaming"] is True
    scan, _ = scan_until(driver, all_ok)
    assert [(r.current_a, r.wiring, r.unit) for r in scan] == [(1e-4, 3, "ohm")]


def test_values_are_the_plant_resistances_within_one_count(
    boards: Callable[..., Board], drivers: Callable[..., SerialAdc]
) -> None:
    board = boards(["t0", "t100", "tm40"])
    driver = drivers(board.device_path, ["2", "0", "1"])  # any order, any subset
    driver.open()
    scan, _ = scan_until(driver, all_ok)
    assert [r.channel for r in scan] == ["2", "0", "1"]
    for reading, r_ohm in zip(scan, (R_M40C, R_0C, R_100C)):
        assert abs(reading.value - r_ohm) <= ONE_COUNT_OHM
        assert reading.value == pytest.approx(adc_ohm(r_ohm), abs=1e-9)
    # worked by hand: 138.5055 / 400 · 2^23 = 2 904 670.86 -> 2 904 671 counts -> 138.505507 ohm
    assert scan[2].value == pytest.approx(2_904_671 / FS24 * 400.0, abs=1e-9)


def test_board_codes_become_statuses(boards: Callable[..., Board], drivers: Callable[..., SerialAdc]) -> None:
    board = boards(["open", "hot", "neg", None, "t0"])
    driver = drivers(board.device_path, ["0", "1", "2", "3", "4"])
    driver.open()
    scan, _ = scan_until(driver, lambda s: bool(s) and s[-1].ok)
    # adcframe protocol: an open input is +full scale with O; beyond ±full scale the
    # board clips and sends H (500 ohm > R_ref = 400 ohm) or L; an unconnected input reads open
    assert [r.status for r in scan] == ["open", "overload", "out_of_range", "open", "ok"]
    assert all(math.isnan(r.value) for r in scan[:4])
    assert all(r.reason for r in scan[:4])


def test_the_board_reference_wins_over_the_configured_one(
    boards: Callable[..., Board], drivers: Callable[..., SerialAdc]
) -> None:
    board = boards(["t100"], reference_ohm=402.0)
    driver = drivers(board.device_path, ["0"], reference_ohm=400.0)
    driver.open()
    scan, _ = scan_until(driver, all_ok)
    assert scan[0].value == pytest.approx(adc_ohm(R_100C, 402.0), abs=1e-9)
    h = driver.health()
    assert h["reference_ohm"] == 402.0
    assert any("R_ref" in str(n) for n in h["notes"])  # type: ignore[attr-defined]


def test_a_frame_is_never_returned_twice(boards: Callable[..., Board], drivers: Callable[..., SerialAdc]) -> None:
    board = boards(["t0"], rate_hz=10.0)
    driver = drivers(board.device_path, ["0"], rate_hz=10.0, timeout_s=1.0)
    driver.open()
    stamps = []
    for _ in range(4):  # back to back: each call waits for a frame it has not returned
        scan = driver.read_scan()
        assert all_ok(scan)
        stamps.append(scan[0].t_utc_s)
    # a frame is stamped when it arrives: a frame returned twice would repeat its stamp
    assert all(b > a for a, b in zip(stamps, stamps[1:]))
    assert driver.health()["reads"] == 4


def test_badsum_gives_checksum_and_never_a_value(boards: Callable[..., Board], drivers: Callable[..., SerialAdc]) -> None:
    board = boards(["t0"])
    driver = drivers(board.device_path, ["0"])
    driver.open()
    scan_until(driver, all_ok)
    board.fault_badsum()
    scan, _ = scan_until(driver, lambda s: statuses(s) == {"checksum"})
    assert "checksum" in scan[0].reason
    during = some_scans(driver, 5)
    assert all(statuses(s) <= {"checksum", "timeout"} for s in during)
    assert sum(statuses(s) == {"checksum"} for s in during) >= 3
    board.clear()
    scan, _ = scan_until(driver, all_ok)
    assert scan[0].value == pytest.approx(adc_ohm(R_0C), abs=1e-9)
    h = driver.health()
    # every rejected frame had a sequence number: the gap is exactly those frames
    assert h["bad_by_reason"] == {"checksum": h["bad_frames"]}
    assert h["missed_frames"] == h["bad_frames"] > 0
    assert h["sequence_gaps"] == 1


def test_partial_and_run_together_frames_give_the_right_values(
    boards: Callable[..., Board], drivers: Callable[..., SerialAdc]
) -> None:
    board = boards(["t0", "t100"])
    driver = drivers(board.device_path, ["0", "1"])
    driver.open()
    scan_until(driver, all_ok)
    frames_before = driver.health()["frames"]
    board.fault_partial()
    for scan, _ in zip(paced(driver), range(10)):
        assert all_ok(scan)
        assert [r.value for r in scan] == pytest.approx([adc_ohm(R_0C), adc_ohm(R_100C)], abs=1e-9)
    h = driver.health()
    assert h["frames"] > frames_before  # type: ignore[operator]
    assert (h["bad_frames"], h["missed_frames"]) == (0, 0)


def test_garbage_between_frames_costs_no_value(boards: Callable[..., Board], drivers: Callable[..., SerialAdc]) -> None:
    board = boards(["t0", "t100"])
    driver = drivers(board.device_path, ["0", "1"])
    driver.open()
    scan_until(driver, all_ok)
    board.fault_garbage()  # random bytes of any value, non-ASCII included
    deadline = time.monotonic() + 3.0
    for scan in paced(driver):
        assert all_ok(scan)
        assert [r.value for r in scan] == pytest.approx([adc_ohm(R_0C), adc_ohm(R_100C)], abs=1e-9)
        if driver.health()["bad_frames"] >= 5:  # type: ignore[operator]
            break
        assert time.monotonic() < deadline, "no garbage seen"
    board.clear()
    scan, _ = scan_until(driver, all_ok)
    assert driver.health()["missed_frames"] == 0


def test_mute_times_out_without_stale_values_and_recovers(
    boards: Callable[..., Board], drivers: Callable[..., SerialAdc]
) -> None:
    board = boards(["t0"])
    driver = drivers(board.device_path, ["0"])
    driver.open()
    scan_until(driver, all_ok)
    board.fault_mute()
    scan, _ = scan_until(driver, lambda s: statuses(s) == {"timeout"})
    assert "within 0.3 s" in scan[0].reason
    during = some_scans(driver, 5)
    # never the last value again
    assert all(statuses(s) == {"timeout"} for s in during), [(s[0].status, s[0].reason) for s in during]
    assert driver.health()["timeouts"] >= 2  # type: ignore[operator]
    board.clear()
    scan, _ = scan_until(driver, all_ok)
    assert scan[0].value == pytest.approx(adc_ohm(R_0C), abs=1e-9)


def test_vanish_is_lost_and_the_board_comes_back_through_its_link(
    boards: Callable[..., Board], drivers: Callable[..., SerialAdc], tmp_path: os.PathLike[str]
) -> None:
    # a pty that vanishes comes back under a new /dev/pts name; the simulator's
    # link_path (like socat's link=) gives the driver a path that stays the same
    link = os.path.join(tmp_path, "adc0")
    board = boards(["t0"], link_path=link)
    driver = drivers(link, ["0"])
    driver.open()
    scan_until(driver, all_ok)
    board.fault_vanish()
    scan, _ = scan_until(driver, lambda s: statuses(s) == {"lost"})
    h = driver.health()
    assert h["connected"] is False
    assert h["next_retry_utc_s"] is not None
    during = some_scans(driver, 4)
    assert all(statuses(s) == {"lost"} for s in during)
    board.clear()
    scan, _ = scan_until(driver, all_ok)
    assert scan[0].value == pytest.approx(adc_ohm(R_0C), abs=1e-9)
    h = driver.health()
    assert h["connected"] is True
    assert h["reconnects"] == 1
    assert str(h["identity"]).startswith(f"{MAKER} {MODEL}")


def test_a_different_board_on_the_same_path_is_refused(
    boards: Callable[..., Board], drivers: Callable[..., SerialAdc], tmp_path: os.PathLike[str]
) -> None:
    link = os.path.join(tmp_path, "adc0")
    board = boards(["t0"], link_path=link)
    driver = drivers(link, ["0"])
    driver.open()
    scan_until(driver, all_ok)
    board.fault_vanish()
    scan_until(driver, lambda s: statuses(s) == {"lost"})
    other = boards(["t100"], link_path=link, serial_number="TF24-000999")
    scan, before = scan_until(driver, lambda s: statuses(s) == {"error"})
    assert "different board" in scan[0].reason
    assert not any(r.ok for s in before for r in s)
    other.close()
    board.clear()
    scan, _ = scan_until(driver, all_ok)
    assert scan[0].value == pytest.approx(adc_ohm(R_0C), abs=1e-9)


def test_a_vanished_board_costs_no_cpu_while_the_driver_waits(
    boards: Callable[..., Board], drivers: Callable[..., SerialAdc], tmp_path: os.PathLike[str]
) -> None:
    # through a link: a freed /dev/pts name may be given to another process's pty
    link = os.path.join(tmp_path, "adc0")
    board = boards(["t0"], link_path=link)
    driver = drivers(link, ["0"], backoff=(0.05, 0.4))
    driver.open()
    scan_until(driver, all_ok)
    board.fault_vanish()
    scan_until(driver, lambda s: statuses(s) == {"lost"})
    wall0, cpu0 = time.monotonic(), time.process_time()
    for scan, _ in zip(paced(driver, 0.05), range(40)):  # 2 s of scans at 20 per second
        assert statuses(scan) == {"lost"}
    cpu_s, wall_s = time.process_time() - cpu0, time.monotonic() - wall0
    # the whole process (board simulator threads included) against 5 % of one core
    # (the budget asked of this driver; common practice, no published source)
    print(f"\nCPU while waiting to reconnect: {cpu_s / wall_s:.2%} of one core over {wall_s:.2f} s")
    assert cpu_s / wall_s < 0.05
    assert driver.health()["connect_attempts"] >= 5  # type: ignore[operator]


def test_the_port_is_locked_against_a_second_driver(
    boards: Callable[..., Board], drivers: Callable[..., SerialAdc]
) -> None:
    board = boards(["t0"])
    first = drivers(board.device_path, ["0"])
    first.open()
    second = drivers(board.device_path, ["0"])
    with pytest.raises(ConnectionLost):
        second.open()
    assert statuses(second.read_scan()) == {"lost"}
    assert all_ok(scan_until(first, all_ok)[0])


def test_a_silent_board_fails_open_with_a_timeout(boards: Callable[..., Board], drivers: Callable[..., SerialAdc]) -> None:
    board = boards(["t0"])
    board.fault_mute()
    driver = drivers(board.device_path, ["0"], backoff=(0.05, 0.1))
    with pytest.raises(InstrumentTimeout) as info:
        driver.open()
    assert info.value.command == "WHO"
    scan = driver.read_scan()  # in back-off: at once, and still a timeout (the port was there)
    assert statuses(scan) == {"timeout"}
    board.clear()
    scan, _ = scan_until(driver, all_ok)
    assert driver.health()["reconnects"] == 0  # the first good connection


# ---------------------------------------------------------------- back-off on the service clock


def test_reconnects_back_off_doubling_to_the_cap(tmp_path: os.PathLike[str]) -> None:
    clock = ManualClock(start_s=1000.0)  # moves only when the test sets clock.t_s
    missing = os.path.join(tmp_path, "no-such-tty")
    driver = SerialAdc("adc1", missing, ["0"], clock=clock, backoff=(0.1, 0.4))
    with pytest.raises(ConnectionLost):
        driver.open()
    # from memory of RFC 6298, 5.5 and 2.5: double the wait after each failure, up to a cap
    for delay in (0.1, 0.2, 0.4, 0.4, 0.4):
        h = driver.health()
        assert float(h["next_retry_utc_s"]) - clock.utc_s() == pytest.approx(delay, abs=1e-6)  # type: ignore[arg-type]
        attempts = h["connect_attempts"]
        failed_at = clock.t_s
        # before the retry is due: at once, "lost", and no attempt to open
        clock.t_s = failed_at + 0.9 * delay
        scan = driver.read_scan()
        assert statuses(scan) == {"lost"}
        assert "next try in" in scan[0].reason
        assert driver.health()["connect_attempts"] == attempts
        clock.t_s = failed_at + delay
        assert statuses(driver.read_scan()) == {"lost"}
        assert driver.health()["connect_attempts"] == attempts + 1  # type: ignore[operator]
    assert driver.health()["reconnects"] == 0


# ---------------------------------------------------------------- through a pyserial URL


class TcpBridge:
    """Loopback TCP that relays one client at a time to the board's pty (test plumbing for ``socket://``)."""

    def __init__(self, device_path: str) -> None:
        self.pty = serial.Serial(device_path, timeout=0)
        self.server = socket.create_server(("127.0.0.1", 0))
        self.url = f"socket://127.0.0.1:{self.server.getsockname()[1]}"
        self.accepted = 0
        self._conn: socket.socket | None = None
        self._lock = threading.Lock()
        self._stop = threading.Event()
        self._thread = threading.Thread(target=self._run, name="tcp-bridge", daemon=True)
        self._thread.start()

    def _run(self) -> None:
        while not self._stop.is_set():
            with self._lock:
                conn = self._conn
            watch: list[object] = [self.server, self.pty.fileno()] + ([conn] if conn else [])
            try:
                ready, _, _ = select.select(watch, [], [], 0.05)
            except (OSError, ValueError):
                continue
            if self.server in ready:
                new, _ = self.server.accept()
                with self._lock:
                    old, self._conn = self._conn, new
                    self.accepted += 1
                if old is not None:
                    old.close()
            if self.pty.fileno() in ready:
                data = self.pty.read(max(1, self.pty.in_waiting))
                if conn is not None:
                    try:
                        conn.sendall(data)
                    except OSError:
                        self._forget(conn)
            if conn is not None and conn in ready:
                try:
                    data = conn.recv(4096)
                except OSError:
                    data = b""
                if data:
                    self.pty.write(data)
                else:
                    self._forget(conn)

    def _forget(self, conn: socket.socket) -> None:
        with self._lock:
            if self._conn is conn:
                self._conn = None
        conn.close()

    def drop(self) -> None:
        """Cut the client off, as a network link that fails."""
        with self._lock:
            conn = self._conn
        if conn is not None:
            conn.shutdown(socket.SHUT_RDWR)

    def inject(self, line: bytes) -> None:
        """Send a command to the board behind the driver's back."""
        self.pty.write(line)

    def close(self) -> None:
        self._stop.set()
        self._thread.join(2.0)
        with self._lock:
            if self._conn is not None:
                self._conn.close()
        self.server.close()
        self.pty.close()


@pytest.fixture
def bridge(boards: Callable[..., Board]) -> Iterator[tuple[Board, TcpBridge]]:
    board = boards(["t0", "t100"])
    b = TcpBridge(board.device_path)
    yield board, b
    b.close()


def test_a_socket_url_reads_loses_and_reconnects(
    bridge: tuple[Board, TcpBridge], drivers: Callable[..., SerialAdc]
) -> None:
    board, b = bridge
    driver = drivers(b.url, ["0", "1"])
    driver.open()
    scan, _ = scan_until(driver, all_ok)
    assert [r.value for r in scan] == pytest.approx([adc_ohm(R_0C), adc_ohm(R_100C)], abs=1e-9)
    b.drop()
    scan_until(driver, lambda s: statuses(s) == {"lost"})
    scan, _ = scan_until(driver, all_ok)
    assert [r.value for r in scan] == pytest.approx([adc_ohm(R_0C), adc_ohm(R_100C)], abs=1e-9)
    assert driver.health()["reconnects"] == 1
    assert b.accepted == 2


def test_a_board_that_stopped_streaming_is_started_again(
    bridge: tuple[Board, TcpBridge], drivers: Callable[..., SerialAdc]
) -> None:
    # as after a board restart behind a port that stayed: silent, then set up again
    board, b = bridge
    driver = drivers(b.url, ["0", "1"])
    driver.open()
    scan_until(driver, all_ok)
    b.inject(encode_command("HALT"))
    scan_until(driver, lambda s: statuses(s) == {"timeout"})
    scan_until(driver, all_ok)
    h = driver.health()
    assert h["resyncs"] == 1
    assert board.status()["streaming"] is True


def test_settings_changed_behind_the_drivers_back_are_set_again(
    bridge: tuple[Board, TcpBridge], drivers: Callable[..., SerialAdc]
) -> None:
    board, b = bridge
    driver = drivers(b.url, ["0", "1"], excitation_a=250e-6)
    driver.open()
    scan_until(driver, all_ok)
    b.inject(encode_command("EXC", "0.0001"))
    deadline = time.monotonic() + 3.0
    while driver.health()["resyncs"] == 0:
        scan = driver.read_scan()
        # no reading may claim 250 µA for a frame measured at 100 µA
        assert all(r.current_a == 250e-6 for r in scan if r.ok)
        assert time.monotonic() < deadline, "the change was never noticed"
    scan, before = scan_until(driver, all_ok)
    assert all(r.current_a == 250e-6 for s in [*before, scan] for r in s if r.ok)
    assert board.status()["excitation_a"] == 250e-6
    assert driver.health()["config_changes"] == 1


# ---------------------------------------------------------------- the frame handling, fed bytes


def _frame(seq: int, counts: tuple[int, ...], codes: str) -> Frame:
    return Frame(seq, seq * 20, 0, counts, codes)


frames = st.builds(
    _frame,
    st.integers(0, 65535),
    st.tuples(st.integers(-FS24, FS24 - 1), st.integers(-FS24, FS24 - 1)),
    st.text(alphabet="GOHL", min_size=2, max_size=2),
)


@settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    pieces=st.lists(st.one_of(st.binary(max_size=48), frames), max_size=12),
    cuts=st.lists(st.integers(1, 64), max_size=20),
    takes=st.lists(st.booleans(), max_size=20),
)
def test_random_bytes_never_raise_and_never_invent_a_value(
    pieces: list[bytes | Frame], cuts: list[int], takes: list[bool]
) -> None:
    stream = AdcStream()
    data = b"".join(encode_frame(p) if isinstance(p, Frame) else p for p in pieces)
    sent = [p for p in pieces if isinstance(p, Frame)]
    # what a good frame may say, worked from the protocol: counts / 2^23 · 400 ohm
    possible = {(i, c / FS24 * 400.0) for f in sent for i, (c, code) in enumerate(zip(f.counts, f.codes)) if code == "G"}
    scans: list[list[RawReading]] = []
    pos, k = 0, 0
    while pos < len(data):
        step = cuts[k % len(cuts)] if cuts else len(data)
        stream.feed(data[pos : pos + step], utc_s=float(k), mono_s=float(k))
        pos += step
        if not takes or takes[k % len(takes)]:
            got = stream.take([("0", 0), ("1", 1), ("5", 5)], reference_ohm=400.0, bits=24, current_a=None, wiring=3, utc_s=0.0)
            if got is not None:
                scans.append(got)
        k += 1
    for scan in scans:
        assert [r.channel for r in scan] == ["0", "1", "5"]
        assert all(r.status in STATUSES for r in scan)
        for i, r in enumerate(scan[:2]):
            if r.ok:
                assert (i, r.value) in possible
        assert not scan[2].ok  # input 5 is on no frame here
    # each good frame is handed out at most once
    assert sum(any(r.ok or r.status in ("open", "overload", "out_of_range") for r in s) for s in scans) <= len(sent)
    assert stream.frames <= len(sent)
