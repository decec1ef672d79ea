"""The logger with its alarms against the simulated lab: a heater runaway, the interlock, the recovery,
acknowledgements through the operator actions table and `soaklog ack`, restarts, lost instruments, shelving."""

from __future__ import annotations

import subprocess
import sys

from testkit import EPOCH_UTC_S, wait_for

from soaklog.store import StoreReader, StoreWriter

TRIP = "air-over-temperature-trip"
HIGH = "air-over-temperature"


def ack_cli(*args: str, timeout: float = 60) -> subprocess.CompletedProcess[str]:
    return subprocess.run([sys.executable, "-m", "soaklog", "ack", *args], capture_output=True, text=True,
                          timeout=timeout)


#: the chamber's speed while the interlock races its heating: the 15 K from the trip (140 °C) to the chamber's
#: own cut-out (155 °C) take about a minute of chamber time at full heat, which is 0.5 s of a loaded machine's
#: time at 120x but 3 s at 20x; the heating up to RACE_FROM_C runs at the lab's speed
RACE_SPEED = 20.0
RACE_FROM_C = 110.0


def runaway_until_tripped(run, *, race: bool = True) -> None:
    """The controller fails at full heat until the interlock switches the supply off (``race``: at RACE_SPEED
    from RACE_FROM_C on, for a test that asserts the interlock beat the cut-out)."""
    world = run.lab.world
    world.set_runaway(True)  # the chamber controller stuck at full heat
    if race:
        wait_for(lambda: world.status()["air_c"] >= RACE_FROM_C, 90, f"the air at {RACE_FROM_C} °C")
        run.set_chamber_speed(RACE_SPEED)
    wait_for(lambda: "OUTPut OFF" in run.lab.supply.received(), 90, "OUTPut OFF at the heater supply")
    run.set_chamber_speed(run.speed)


def test_overshoot_trips_the_interlock_the_chamber_cools_and_the_acknowledgements_are_recorded(alarm_lab):
    run = alarm_lab(speed=120.0)
    runaway_until_tripped(run)
    world = run.lab.world
    assert world.heater_supply_enabled is False  # the SCPI command really switched the simulated supply off
    # the chamber cools: both alarms return (the trip latches, the high one waits for its acknowledgement)
    wait_for(lambda: {a.state for i, a in run.alarms().items() if i.startswith(HIGH + ":")}
             == {"returned_unacknowledged"}, 90, "the high alarms to return")
    alarms = run.alarms()
    # the first channel over 140 °C trips; the other may stay just under it once the heat is cut
    assert alarms[f"{TRIP}:air-supply"].state == "latched" or alarms[f"{TRIP}:air-return"].state == "latched"
    assert {alarms[f"{TRIP}:{c}"].state for c in ("air-supply", "air-return")} <= {"latched", "normal"}
    # the demo's own cut-out (155 °C) never had to act: the interlock got there first
    assert world.status()["cutout_tripped"] is False
    assert world.status()["air_c"] < 128.0

    events = run.events()
    kinds = [(e.kind, e.data.get("alarm", "")) for e in events]
    raised = next(i for i, (k, a) in enumerate(kinds) if k == "alarm_raised" and a.startswith(TRIP))
    done = next(i for i, e in enumerate(events) if e.kind == "action_done" and "OUTPut OFF" in e.message)
    cleared = kinds.index(("alarm_cleared", f"{HIGH}:air-supply"))
    assert raised < done < cleared
    assert events[raised].severity == "critical" and events[raised].channel in ("air-supply", "air-return")
    assert events[done].data["latency_s"] >= 0.0

    # acknowledge the high alarm through the operator actions table, as the dashboard does
    with StoreWriter.open(run.config.database) as store:
        req = store.add_operator_action("acknowledge", target=HIGH, note="door seal checked", actor="ana",
                                        now_ms=int(EPOCH_UTC_S * 1000))
    wait_for(lambda: _applied(run, req), 30, "the acknowledgement to be applied")
    with StoreReader.open(run.config.database) as store:
        row = next(r for r in store.operator_actions() if r.id == req)
    assert row.outcome.startswith("applied: acknowledged 2")
    acks = [e for e in run.events("alarm_acknowledged") if e.data["rule"] == HIGH]
    assert len(acks) == 2 and all(e.data["note"] == "door seal checked" and e.data["actor"] == "ana" for e in acks)
    assert {run.alarms()[f"{HIGH}:{c}"].state for c in ("air-supply", "air-return")} == {"normal"}

    # reset the latched trip with `soaklog ack`, as a user does
    p = ack_cli("--all", "--db", run.config.database, "--note", "controller repaired", "--actor", "ben")
    assert p.returncode == 0, p.stderr
    assert "applied: acknowledged" in p.stdout
    assert {run.alarms()[f"{TRIP}:{c}"].state for c in ("air-supply", "air-return")} == {"normal"}
    tripped = events[raised].channel
    with StoreReader.open(run.config.database) as store:
        story = store.connection.execute(
            "SELECT kind, channel, message FROM events_v WHERE run_id = ? AND (kind LIKE 'alarm_%' OR kind LIKE 'action_%')",
            (run.run_id,)).fetchall()
    assert ("alarm_acknowledged", tripped, f"{TRIP}:{tripped} reset: controller repaired") in story

    # nothing waits any more; an unknown alarm is a usage error
    p = ack_cli("--all", "--db", run.config.database)
    assert p.returncode == 0 and "nothing waits" in p.stdout
    p = ack_cli("door-open", "--db", run.config.database)
    assert p.returncode == 2 and "no alarm 'door-open'" in p.stderr


def _applied(run, req: int) -> bool:
    with StoreReader.open(run.config.database) as store:
        return any(r.id == req and r.applied_ms is not None for r in store.operator_actions())


def test_a_restart_keeps_a_latched_trip_and_refuses_stale_requests(alarm_lab):
    run = alarm_lab(speed=120.0)
    runaway_until_tripped(run, race=False)  # what matters here is the latch, not who cut the heat first
    run.lab.world.set_runaway(False)
    wait_for(lambda: "latched" in {run.alarms()[f"{TRIP}:{c}"].state for c in ("air-supply", "air-return")}, 90,
             "the trip to latch")
    latched = next(i for i, a in run.alarms().items() if a.state == "latched")
    run.service.stop()
    with StoreWriter.open(run.config.database) as store:
        old = store.add_operator_action("acknowledge", target="*", now_ms=int(EPOCH_UTC_S * 1000) - 3_600_000)
    run.start_service()  # the same configuration: the run continues
    assert run.alarms()[latched].state == "latched"
    with StoreReader.open(run.config.database) as store:
        row = next(r for r in store.operator_actions() if r.id == old)
    assert row.outcome.startswith("not applied: queued at")
    # no logger running on the file: `soaklog ack` says so and fails
    run.service.stop()
    p = ack_cli(latched, "--db", run.config.database, "--wait", "1")
    assert p.returncode == 1 and "no logger applied" in p.stderr


def test_a_lost_instrument_raises_the_builtin_alarm_and_stale_channels(alarm_lab):
    run = alarm_lab(speed=120.0)
    svc = run.service
    wait_for(lambda: svc.stats.per_instrument.get("meter", 0) >= 10, 30, "meter readings")
    run.lab.meter.fault_mute()
    wait_for(lambda: getattr(run.alarms().get("instrument-lost:meter"), "state", None) == "unacknowledged", 60,
             "the instrument-lost alarm")
    # five minutes of chamber time without a good reading: the meter's channels are stale
    wait_for(lambda: run.alarms()["no-data:air-supply"].state == "unacknowledged", 60, "stale channels")
    assert run.alarms()["no-data:door-corner"].state == "normal"  # the board keeps reading
    run.lab.meter.clear_faults()
    wait_for(lambda: run.alarms()["instrument-lost:meter"].state == "returned_unacknowledged", 60,
             "the meter back")


def test_a_shelved_alarm_comes_back_at_its_expiry(alarm_lab):
    run = alarm_lab(speed=120.0)
    # shelve for ten minutes of the requester's time; the service measures them on its own clock
    with StoreWriter.open(run.config.database) as store:
        req = store.add_operator_action("shelve", target=HIGH, note="door work", actor="ana",
                                        now_ms=1_000, until_ms=1_000 + 600_000)
    wait_for(lambda: len(run.events("alarm_unshelved")) == 2, 120, "the shelf to expire")
    # judged from the stored events, stamped on the service's clock (chamber time), not from what the
    # states happen to be when the test looks: at 120x the ten minutes pass in 5 s of wall time
    shelved = {e.data["alarm"]: e for e in run.events("alarm_shelved")}
    unshelved = {e.data["alarm"]: e for e in run.events("alarm_unshelved")}
    assert len(shelved) == 2 and set(shelved) == set(unshelved) and all(a.startswith(HIGH + ":") for a in shelved)
    for alarm, e in shelved.items():
        assert e.data["state"] == "shelved" and e.data["note"] == "door work" and e.data["actor"] == "ana"
        assert "shelved for 600 s" in e.message
        back_after_s = (unshelved[alarm].t_ms - e.t_ms) / 1000.0
        # never early; late at most by how far the logger lags the 120x chamber on a loaded machine
        # (a generous bound: the shelf's own length, 5 s of wall time)
        assert 600.0 <= back_after_s <= 1200.0, (alarm, back_after_s)
        assert "shelf expired" in unshelved[alarm].message
    assert {a.state for i, a in run.alarms().items() if i.startswith(HIGH + ":")} == {"normal"}
    # a high-high alarm may not be shelved: refused, recorded, nothing changed
    with StoreWriter.open(run.config.database) as store:
        req = store.add_operator_action("shelve", target=TRIP, now_ms=1_000, until_ms=61_000)
    wait_for(lambda: _applied(run, req), 30, "the refusal")
    with StoreReader.open(run.config.database) as store:
        row = next(r for r in store.operator_actions() if r.id == req)
    assert row.outcome.startswith("not applied") and "may not be shelved" in row.outcome
    assert any(e.kind == "operator_request" for e in run.events())
