"""The logger service: the imperative shell that wires drivers, pipeline, alarms, actions and store.

Threads:

- one acquisition thread per instrument: scans on a monotonic schedule
  (slot k at t0 + k·interval, so no drift accumulates); a slow instrument
  delays only itself, and a scan that starts late is recorded;
- one pipeline-and-writer thread: converts what the acquisition threads queue,
  commits at least once a second, records instrument loss and recovery, keeps
  readings in a bounded buffer while the disk refuses them; it also runs the
  alarm engine (a scan an alarm watches is converted and judged as soon as it
  arrives, so an action starts within one scan of the reading that trips it),
  applies the operators' requests from the store each commit interval, and
  records alarm states, alarm events and the actions' outcomes;
- one worker thread per configured action (``daq.actions``): nothing an
  action does can block acquisition or the writer;
- the caller's thread supervises (``run``): duration, signals, stop.

Drivers are built by a factory so tests and the demo can pass their own.
Time comes from a ``ServiceClock``: real, or accelerated against a simulator.
"""

from __future__ import annotations

import logging
import queue
import signal
import threading
import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from soaklog import __version__
from soaklog.actions import ActionOutcome, ActionRunner
from soaklog.alarms import AlarmEngine, AlarmEvent, AlarmState, Sample
from soaklog.clock import ServiceClock, SystemClock
from soaklog.config import ChannelConfig, InstrumentConfig, StationConfig
from soaklog.errors import InstrumentError, StorageError
from soaklog.pipeline import Pipeline
from soaklog.sensors.leads import Leads
from soaklog.store import AlarmRow, EventRow, SampleBatch, StoreWriter, iso_utc, status_name
from soaklog.drivers.base import Driver, RawReading

__all__ = ["Service", "ServiceStats", "default_driver_factory", "MAX_BUFFERED_READINGS"]

log = logging.getLogger("soaklog")
alarm_log = logging.getLogger("soaklog.alarms")

#: readings kept in memory while the disk refuses them (about 60 MB); beyond
#: this the oldest are dropped and the drop is recorded as an event
MAX_BUFFERED_READINGS = 1_000_000

#: a scan that starts this much later than its slot is recorded (fraction of the interval)
LATE_FRACTION = 0.5

#: an operator's request queued this long before the service started was made while no
#: logger ran on the file: it is recorded as not applied rather than applied to new alarms
STALE_REQUEST_S = 60.0

#: alarm events kept in memory while the disk refuses them
MAX_BUFFERED_EVENTS = 100_000

DriverFactory = Callable[..., Driver]


def default_driver_factory(cfg: InstrumentConfig, clock: ServiceClock, inputs: Sequence[str],
                           station: StationConfig | None = None) -> Driver:
    """Build the driver an instrument's kind makes, for the channels that use these inputs."""
    by_input = {c.input: c for c in station.channels if c.instrument == cfg.name} if station is not None else {}
    channels = [by_input.get(i) or _bare_channel(cfg, i) for i in inputs]
    return cfg.kind.driver(cfg, clock, channels)


def _bare_channel(cfg: InstrumentConfig, input_name: str) -> ChannelConfig:
    """A channel known only by its input (a driver built without its station's channels)."""
    return ChannelConfig(name=input_name, label=input_name, instrument=cfg.name, input=input_name, sensor="",
                         leads=Leads(cfg.wiring), excitation_a=None)


@dataclass
class ServiceStats:
    """Counters the service keeps (read from any thread; approximate while running)."""

    scans: int = 0
    readings: int = 0
    stored: int = 0
    commits: int = 0
    late_scans: int = 0
    storage_failures: int = 0
    dropped: int = 0
    buffered: int = 0
    per_instrument: dict[str, int] = field(default_factory=dict)


@dataclass
class _Scan:
    instrument: str
    readings: list[RawReading]
    health: dict[str, Any]
    late_s: float


class Service:
    """One station's logger. ``start()``, then ``run()`` or ``stop()``."""

    def __init__(
        self,
        config: StationConfig,
        *,
        clock: ServiceClock | None = None,
        driver_factory: DriverFactory | None = None,
        new_run: bool = False,
        commit_interval_s: float | None = None,
    ) -> None:
        self.config = config
        self.clock = clock or SystemClock()
        self._factory = driver_factory or default_driver_factory
        self._new_run = new_run
        self._commit_s = commit_interval_s or config.commit_interval_s
        self._stop = threading.Event()
        self._queue: queue.Queue[_Scan | None] = queue.Queue(maxsize=10_000)
        self._threads: list[threading.Thread] = []
        self._drivers: dict[str, Driver] = {}
        self.stats = ServiceStats()
        self.store: StoreWriter | None = None
        self.run_id: int | None = None
        self.pipeline: Pipeline | None = None
        self._started = False
        self._fatal: BaseException | None = None
        self.alarms: AlarmEngine | None = None
        self.actions: ActionRunner | None = None
        self._ch_ids: dict[str, int] = {}
        self._ch_names: dict[int, str] = {}
        self._watched: frozenset[str] = frozenset()
        self._events_out: list[EventRow] = []  # alarm and action events not yet stored (writer thread)
        self._unsaved: dict[str, AlarmState] = {}  # alarm states not yet stored
        self._status_names: dict[int, str] = {}

    # ------------------------------------------------------------ life cycle

    def start(self) -> int:
        """Open the store, continue or begin the run, start the threads; returns the run id."""
        cfg = self.config
        store = StoreWriter.open(cfg.database)
        self.store = store
        now_ms = int(self.clock.utc_s() * 1000)
        info = store.begin_run(
            cfg.text, now_ms=now_ms, station=cfg.station, name=cfg.run_name,
            software=f"soaklog {__version__}", config_path=cfg.path, new_run=self._new_run,
        )
        self.run_id = info.run_id
        ids = store.ensure_channels(
            info.run_id, [(c.name, c.label, c.instrument, c.quantity) for c in cfg.channels]
        )
        self.pipeline = Pipeline(cfg, ids)
        self._ch_ids = dict(ids)
        self._ch_names = {v: k for k, v in ids.items()}
        self._start_alarms(store, info.run_id, continued=info.continued, now_ms=now_ms)
        if info.continued:
            gap_from = info.last_t_ms
            msg = "logger restarted; run continues"
            data: dict[str, Any] = {}
            if gap_from is not None:
                gap_s = max(0.0, (now_ms - gap_from) / 1000.0)
                msg = f"logger restarted after a gap of {gap_s:.1f} s; run continues"
                data = {"from_utc": iso_utc(gap_from), "to_utc": iso_utc(now_ms), "gap_s": gap_s}
            store.add_event(info.run_id, now_ms, "gap", msg, severity="warning", data=data)
            log.warning("run %d continued: %s", info.run_id, msg)
        store.add_event(
            info.run_id, now_ms, "service_start",
            f"logger started ({len(cfg.channels)} channels on {len(cfg.instruments)} instruments)",
            data={"software": f"soaklog {__version__}", "config": cfg.path},
        )
        log.info("run %d: logging %d channels to %s", info.run_id, len(cfg.channels), cfg.database)

        for inst in cfg.instruments:
            inputs = [c.input for c in cfg.channels if c.instrument == inst.name]
            if not inputs:
                continue
            driver = self._factory(inst, self.clock, inputs, cfg)
            self._drivers[inst.name] = driver
            t = threading.Thread(target=self._acquire, args=(inst, driver), name=f"acq-{inst.name}", daemon=True)
            self._threads.append(t)
        writer = threading.Thread(target=self._write_loop, name="writer", daemon=True)
        self._writer = writer
        writer.start()
        for t in self._threads:
            t.start()
        self._started = True
        return info.run_id

    def stop(self) -> None:
        """Stop acquiring, store what is pending, record the stop; idempotent."""
        if not self._started:
            return
        self._started = False
        self._stop.set()
        for t in self._threads:
            t.join(timeout=30)
        self._queue.put(None)
        self._writer.join(timeout=60)
        if self.actions is not None:
            self.actions.close()
        for d in self._drivers.values():
            try:
                d.close()
            except Exception:  # noqa: BLE001 - closing must not stop the shutdown
                log.exception("closing %s", getattr(d, "name", "driver"))
        if self.store is not None and self.run_id is not None:
            now_ms = int(self.clock.utc_s() * 1000)
            self._record_outcomes()
            self._flush_alarms(self.store, self.run_id)
            try:
                self.store.add_event(self.run_id, now_ms, "service_stop", "logger stopped",
                                     data={"readings": self.stats.readings, "stored": self.stats.stored})
                self.store.end_run(self.run_id, now_ms=now_ms)
                self.store.checkpoint()
            except StorageError as exc:
                log.error("could not record the stop: %s", exc)
            self.store.close()
        log.info("stopped: %d readings, %d stored", self.stats.readings, self.stats.stored)

    def run(self, duration_s: float | None = None, *, handle_signals: bool = True) -> int:
        """Start (if needed), run until ``duration_s`` of service time or a signal, stop; exit status."""
        if not self._started:
            self.start()
        stop_req = threading.Event()
        old: dict[int, Any] = {}
        if handle_signals and threading.current_thread() is threading.main_thread():
            for sig in (signal.SIGTERM, signal.SIGINT):
                old[sig] = signal.signal(sig, lambda *_: stop_req.set())
        try:
            end = None if duration_s is None else self.clock.monotonic_s() + duration_s
            while not stop_req.is_set() and self._fatal is None:
                if end is not None and self.clock.monotonic_s() >= end:
                    break
                stop_req.wait(0.2)
        finally:
            self.stop()
            for sig, h in old.items():
                signal.signal(sig, h)
        if self._fatal is not None:
            log.error("stopped on an error: %s", self._fatal)
            return 1
        return 0

    def health(self) -> dict[str, dict[str, Any]]:
        return {name: d.health() for name, d in self._drivers.items()}

    # ------------------------------------------------------------ acquisition

    def _acquire(self, inst: InstrumentConfig, driver: Driver) -> None:
        interval = inst.interval_s
        try:
            driver.open()
        except InstrumentError as exc:
            log.warning("%s: %s; will keep trying", inst.name, exc)
        except Exception:  # noqa: BLE001 - a driver bug must not kill acquisition silently
            log.exception("%s: opening failed", inst.name)
        t0 = self.clock.monotonic_s()
        k = 0
        while not self._stop.is_set():
            slot = t0 + k * interval
            if not self.clock.wait_until(slot, self._stop):
                break
            late = self.clock.monotonic_s() - slot
            try:
                readings = driver.read_scan()
            except Exception as exc:  # noqa: BLE001 - contract says never, but never trust it
                log.exception("%s: read_scan raised", inst.name)
                from soaklog.drivers.base import failed_scan

                readings = failed_scan(
                    [c.input for c in self.config.channels if c.instrument == inst.name],
                    self.clock.utc_s(), "error", f"driver error: {exc}",
                )
            try:
                health = driver.health()
            except Exception:  # noqa: BLE001
                health = {}
            self._queue.put(_Scan(inst.name, readings, health, late))
            # next slot: the first one still ahead (a slow scan skips slots, never bunches them)
            now = self.clock.monotonic_s()
            k = max(k + 1, int((now - t0) // interval) + 1)

    # ------------------------------------------------------------ writing

    def _write_loop(self) -> None:
        assert self.store is not None and self.pipeline is not None and self.run_id is not None
        store, pipeline, run_id = self.store, self.pipeline, self.run_id
        scans: dict[str, list[Sequence[RawReading]]] = {}  # raw scans since the last commit
        pending: list[SampleBatch] = []  # converted, not yet stored (grows while the disk refuses)
        pending_n = 0
        connected: dict[str, bool | None] = {}
        # instruments with a channel an alarm watches: their scans are judged on arrival
        early = {c.instrument for c in self.config.channels if c.name in self._watched}
        last_commit = time.monotonic()
        last_health = 0.0
        storage_down = False
        done = False
        while not done:
            timeout = max(0.0, self._commit_s - (time.monotonic() - last_commit))
            try:
                item = self._queue.get(timeout=timeout)
            except queue.Empty:
                item = _NOTHING
            if item is None:
                done = True
            elif item is not _NOTHING:
                assert isinstance(item, _Scan)
                self.stats.scans += 1
                self.stats.readings += len(item.readings)
                self.stats.per_instrument[item.instrument] = (
                    self.stats.per_instrument.get(item.instrument, 0) + len(item.readings)
                )
                self._note_health(store, run_id, item, connected)
                if item.instrument in early:
                    batch = pipeline.convert(item.instrument, [item.readings])
                    if len(batch):
                        pending.append(batch)
                        pending_n += len(batch)
                    self._judge(batch, connected)
                else:
                    scans.setdefault(item.instrument, []).append(item.readings)
                if item.late_s > LATE_FRACTION * self.config.instrument(item.instrument).interval_s:
                    self.stats.late_scans += 1
                    self._event(store, run_id, "scan_late",
                                f"{item.instrument}: scan started {item.late_s:.2f} s after its slot",
                                severity="info", data={"late_s": item.late_s})
            if time.monotonic() - last_commit < self._commit_s and not done:
                continue
            # convert everything that arrived in this interval, in one go per channel
            for instrument, raw in scans.items():
                batch = pipeline.convert(instrument, raw)
                if len(batch):
                    pending.append(batch)
                    pending_n += len(batch)
            scans = {}
            if pending:
                try:
                    store.write(run_id, SampleBatch.concat(pending) if len(pending) > 1 else pending[0])
                    self.stats.stored += pending_n
                    self.stats.commits += 1
                    pending, pending_n = [], 0
                    if storage_down:
                        storage_down = False
                        self._event(store, run_id, "storage_recovered", "database writable again; buffered readings stored")
                        log.warning("storage recovered")
                except StorageError as exc:
                    self.stats.storage_failures += 1
                    if not storage_down:
                        storage_down = True
                        log.error("%s; keeping readings in memory and retrying", exc)
                    if pending_n > MAX_BUFFERED_READINGS:
                        pending, pending_n = self._drop_oldest(pending, pending_n)
                    if done:
                        log.error("stopping with %d readings that could not be stored", pending_n)
            self.stats.buffered = pending_n
            self._alarm_interval(store, run_id, connected)
            last_commit = time.monotonic()
            if time.monotonic() - last_health >= 5.0 or done:
                last_health = time.monotonic()
                self._store_health(store, run_id)

    # ------------------------------------------------------------ alarms

    def _start_alarms(self, store: StoreWriter, run_id: int, *, continued: bool, now_ms: int) -> None:
        """Build the engine (continuing a run's stored alarm states) and the action runner."""
        cfg = self.config
        restore = [_state_of(r, self._ch_names) for r in store.alarms(run_id)] if continued else []
        self.alarms = AlarmEngine.from_config(cfg, restore=restore)
        self._watched = self.alarms.watched_channels
        self.actions = ActionRunner({a.name: a.actions for a in cfg.alarms}, station=cfg.station,
                                    utc_s=self.clock.utc_s)
        self._save_states(store, run_id, self.alarms.changed(), now_ms)
        for req in store.pending_operator_actions():
            if req.t_ms < now_ms - STALE_REQUEST_S * 1000:
                store.mark_operator_action(
                    req.id, now_ms=now_ms,
                    outcome=f"not applied: queued at {iso_utc(req.t_ms)} while no logger was running on this file")

    def _judge(self, batch: SampleBatch, connected: dict[str, bool | None]) -> None:
        """Run the engine on a fresh batch; hand the events' actions over at once."""
        engine = self.alarms
        if engine is None:
            return
        samples = self._samples(batch) if len(batch) else []
        events = engine.step(samples, self.clock.utc_s(), _links(connected))
        self._on_alarm_events(events)

    def _samples(self, batch: SampleBatch) -> list[Sample]:
        names, watched, st_names = self._ch_names, self._watched, self._status_names
        out: list[Sample] = []
        for ch, t_ms, temp, st in zip(batch.ch.tolist(), batch.t_ms.tolist(), batch.temp_c.tolist(),
                                      batch.status.tolist(), strict=True):
            name = names.get(ch)
            if name is None or name not in watched:
                continue
            sname = st_names.get(st)
            if sname is None:
                sname = st_names[st] = status_name(st)
            out.append(Sample(name, t_ms / 1000.0, temp, sname))
        return out

    def _on_alarm_events(self, events: Sequence[AlarmEvent]) -> None:
        runner = self.actions
        for e in events:
            fields = e.fields()
            fields["t_utc"] = iso_utc(e.t_s * 1000.0) or ""
            n = runner.submit_event(e.rule, e.trigger, fields) if runner is not None else 0
            (alarm_log.warning if e.kind == "alarm_raised" else alarm_log.info)("alarm %s: %s", e.alarm or "-", e.message)
            data: dict[str, Any] = {"alarm": e.alarm, "rule": e.rule, "source": e.source, "state_before": e.before,
                                    "state": e.after, "value": e.value, "actions": n}
            if e.note or e.actor:
                data.update(note=e.note, actor=e.actor)
            self._events_out.append(EventRow(
                int(round(e.t_s * 1000.0)), e.kind, e.message, e.severity,
                self._ch_ids.get(e.channel) if e.channel else None, data))

    def _alarm_interval(self, store: StoreWriter, run_id: int, connected: dict[str, bool | None]) -> None:
        """Each commit interval: time-driven alarms, operators' requests, actions' outcomes, then store them."""
        engine = self.alarms
        if engine is None:
            return
        now_s = self.clock.utc_s()
        self._on_alarm_events(engine.step([], now_s, _links(connected)))
        try:
            requests = store.pending_operator_actions()
        except StorageError:
            requests = []
        outcomes: list[tuple[int, str]] = []
        for req in requests:
            duration = None
            if req.until_ms is not None:
                # the requested length, measured from the service's own clock (a viewer's clock may differ)
                duration = (int(req.until_ms) - int(req.t_ms)) / 1000.0
            res = engine.apply(req.kind, req.target or "*", now_s, note=req.note or "",
                               actor=req.actor or "", duration_s=duration)
            self._on_alarm_events(res.events)
            outcome = ("applied: " if res.events else "not applied: ") + res.outcome
            if not res.events:
                who = f" by {req.actor}" if req.actor else ""
                self._events_out.append(EventRow(
                    int(now_s * 1000), "operator_request", f"{req.kind} {req.target or '*'}{who}: {res.outcome}",
                    "info", None, {"request": req.id}))
            outcomes.append((int(req.id), outcome))
        self._record_outcomes()
        self._flush_alarms(store, run_id)
        # a request is marked applied only once the states and events it changed are stored: a viewer that
        # sees "applied" (`soaklog ack --wait`, the dashboard) then reads the new states, never the old ones
        for req_id, outcome in outcomes:
            try:
                store.mark_operator_action(req_id, now_ms=int(now_s * 1000), outcome=outcome)
            except StorageError as exc:
                log.error("%s", exc)

    def _record_outcomes(self) -> None:
        if self.actions is None:
            return
        for o in self.actions.outcomes():
            self._events_out.append(_outcome_event(o, self._ch_ids))

    def _flush_alarms(self, store: StoreWriter, run_id: int) -> None:
        """Store the waiting alarm events and changed states; keep them while the disk refuses."""
        if self.alarms is not None:
            for p in self.alarms.changed():
                self._unsaved[p.id] = p
        if self._events_out:
            try:
                store.add_events(run_id, self._events_out)
                self._events_out = []
            except StorageError as exc:
                log.error("%s; alarm events kept in memory", exc)
                del self._events_out[:-MAX_BUFFERED_EVENTS]
        if self._unsaved:
            now_ms = int(self.clock.utc_s() * 1000)
            if self._save_states(store, run_id, list(self._unsaved.values()), now_ms):
                self._unsaved = {}

    def _save_states(self, store: StoreWriter, run_id: int, states: Sequence[AlarmState], now_ms: int) -> bool:
        rows = [_row_of(p, self._ch_ids) for p in states]
        try:
            store.save_alarm_states(run_id, rows, now_ms=now_ms)
        except StorageError as exc:
            log.error("%s", exc)
            return False
        return True

    def _drop_oldest(self, pending: list[SampleBatch], n: int) -> tuple[list[SampleBatch], int]:
        dropped = 0
        while pending and n > MAX_BUFFERED_READINGS:
            b = pending.pop(0)
            n -= len(b)
            dropped += len(b)
        self.stats.dropped += dropped
        log.error("buffer full: %d readings dropped (oldest first)", dropped)
        if self.store is not None and self.run_id is not None:
            self._event(self.store, self.run_id, "data_dropped",
                        f"{dropped} readings dropped: the database refused writes for too long",
                        severity="critical", data={"dropped": dropped})
        return pending, n

    def _event(self, store: StoreWriter, run_id: int, kind: str, message: str, *, severity: str = "info",
               data: dict[str, Any] | None = None, ch: int | None = None) -> None:
        try:
            store.add_event(run_id, int(self.clock.utc_s() * 1000), kind, message,
                            severity=severity, data=data, ch=ch)
        except StorageError as exc:
            log.error("event %s not recorded (%s): %s", kind, exc, message)

    def _note_health(self, store: StoreWriter, run_id: int, scan: _Scan, connected: dict[str, bool | None]) -> None:
        now = bool(scan.health.get("connected", any(r.ok for r in scan.readings)))
        before = connected.get(scan.instrument)
        connected[scan.instrument] = now
        if before is None:
            if not now:
                reason = scan.health.get("last_error") or (scan.readings[0].reason if scan.readings else "")
                self._event(store, run_id, "instrument_lost", f"{scan.instrument}: not reachable at start: {reason}",
                            severity="high")
                log.warning("%s not reachable: %s", scan.instrument, reason)
            return
        if before and not now:
            reason = scan.health.get("last_error") or (scan.readings[0].reason if scan.readings else "")
            self._event(store, run_id, "instrument_lost", f"{scan.instrument}: lost: {reason}", severity="high",
                        data={"reason": reason})
            log.warning("%s lost: %s", scan.instrument, reason)
        elif not before and now:
            self._event(store, run_id, "instrument_recovered", f"{scan.instrument}: back", severity="info")
            log.warning("%s recovered", scan.instrument)

    def _store_health(self, store: StoreWriter, run_id: int) -> None:
        now_ms = int(self.clock.utc_s() * 1000)
        for name, d in self._drivers.items():
            try:
                h = d.health()
            except Exception:  # noqa: BLE001
                h = {}
            try:
                store.set_instrument(run_id, name, now_ms=now_ms, connected=bool(h.get("connected")),
                                     identity=str(h.get("identity", "")), health=h)
            except StorageError:
                pass


_NOTHING: Any = object()


def _links(connected: dict[str, bool | None]) -> dict[str, bool]:
    return {k: v for k, v in connected.items() if v is not None}


def _ms(t_s: float | None) -> int | None:
    return None if t_s is None else int(round(t_s * 1000.0))


def _row_of(p: AlarmState, ch_ids: dict[str, int]) -> AlarmRow:
    value = p.value if p.value is not None and np.isfinite(p.value) else None
    return AlarmRow(p.id, p.rule, p.kind, p.source, ch_ids.get(p.channel) if p.channel else None, p.state,
                    p.severity, p.condition, p.acked, _ms(p.since_s), _ms(p.shelved_until_s), value, p.message)


def _state_of(r: AlarmRow, ch_names: dict[int, str]) -> AlarmState:
    return AlarmState(
        r.id, r.rule, r.kind, r.source, ch_names.get(r.ch) if r.ch is not None else None, r.severity,
        state=r.state,  # type: ignore[arg-type]
        condition=r.condition, raw=r.condition, acked=r.acked,
        since_s=None if r.since_ms is None else r.since_ms / 1000.0,
        shelved_until_s=None if r.shelved_until_ms is None else r.shelved_until_ms / 1000.0,
        value=r.value, message=r.message,
    )


def _outcome_event(o: ActionOutcome, ch_ids: dict[str, int]) -> EventRow:
    f = o.fields
    data: dict[str, Any] = {
        "action": o.action, "action_kind": o.kind, "outcome": o.outcome, "detail": o.detail,
        "alarm": f.get("alarm", ""), "event": f.get("event", ""),
        "started_utc": iso_utc(o.started_utc_s * 1000.0), "duration_s": round(o.duration_s, 4),
    }
    try:
        # from the reading that changed the alarm's state to the action starting
        data["latency_s"] = round(o.started_utc_s - float(f.get("t_s", "")), 4)
    except ValueError:
        pass
    channel = f.get("channel") or None
    return EventRow(int(round(o.ended_utc_s * 1000.0)), o.event_kind, o.message,
                    "info" if o.outcome == "done" else "high", ch_ids.get(channel) if channel else None, data)

