"""Fixtures for driver tests: the simulated meter on loopback TCP, a hand-driven clock, a free dead port."""

from __future__ import annotations

import socket
from collections.abc import Callable, Iterator, Mapping

import pytest
from testkit import ManualClock, closing_all
from testkit.drivers import BACKOFF, CHANNELS, LEAD_OHM, SCAN_MAP, SCAN_VALUES, TIMEOUT_S

from soaklog.drivers.scpi_meter import ScpiMeter
from soaklog.simulators.dmm import DmmSimulator
from soaklog.simulators.plant import FixedPlant


@pytest.fixture
def clock() -> ManualClock:
    return ManualClock()


@pytest.fixture
def start_sim() -> Iterator[Callable[..., DmmSimulator]]:
    """Start a noiseless simulated meter (no thermal EMF, no integration time); closed afterwards."""

    def _start(
        plant: object | None = None, channel_map: Mapping[int, str] | None = None, **options: object
    ) -> DmmSimulator:
        settings: dict[str, object] = {"time_scale": 0.0, "noise_scale": 0.0, "thermal_emf_v": 0.0, "seed": 3}
        settings.update(options)
        return DmmSimulator(
            plant if plant is not None else FixedPlant(SCAN_VALUES, lead_ohm=LEAD_OHM),  # type: ignore[arg-type]
            channel_map if channel_map is not None else SCAN_MAP,
            **settings,  # type: ignore[arg-type]
        ).start()

    with closing_all(_start) as start:
        yield start


@pytest.fixture
def make_meter(clock: ManualClock) -> Iterator[Callable[..., ScpiMeter]]:
    """Build a driver with short timeouts, the manual clock and a small back-off; closed afterwards."""

    def _make(resource: str, channels: tuple[str, ...] = CHANNELS, **options: object) -> ScpiMeter:
        settings: dict[str, object] = {"timeout_s": TIMEOUT_S, "clock": clock, "backoff": BACKOFF}
        settings.update(options)
        return ScpiMeter("dmm1", resource, channels, **settings)  # type: ignore[arg-type]

    with closing_all(_make) as make:
        yield make


@pytest.fixture
def dead_resource() -> str:
    """A loopback port nobody listens on (bound once to find it free, then closed)."""
    with socket.socket(socket.AF_INET, socket.SOCK_STREAM) as s:
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    return f"TCPIP0::127.0.0.1::{port}::SOCKET"
