"""A lumped thermal model of an environmental test chamber: air, load, heater, cooler, controller.

Two nodes, each at one temperature:

    C_air  · dT_air/dt  = P − G_al·(T_air − T_load) − G_loss·(T_air − T_amb)
    C_load · dT_load/dt =     G_al·(T_air − T_load)

with P = heater power − cooler power, G_al the air–load coupling (forced
convection over the fixtures), G_loss = G_wall (+ G_door while the door is
open) the loss to the laboratory. With x = (T_air, T_load) − T_ss, where
T_ss = T_amb + P/G_loss is the common steady state for a constant P, the system
is ẋ = A·x with

    A = [[−(G_al + G_loss)/C_air,  G_al/C_air ],
         [  G_al/C_load,          −G_al/C_load]].

Over one step of length h with P held constant (zero-order hold) the solution
is exact: x(t + h) = exp(A·h)·x(t). exp(A·h) is computed in closed form from the
two real eigenvalues of A by Sylvester's formula, so the discretisation is
exact and unconditionally stable for any step.

A PI controller with conditional-integration anti-windup follows the
profile's set point on a control probe that lags the air by a few seconds.
Its output runs from full cooling (−P_cool) to full heat (+P_max). That lag,
the load drawing heat after the air has arrived and the integral term built up
during a ramp together give the overshoot a real chamber shows after a ramp
or a step.

Faults and disturbances: the door open for a while (extra loss), heater
runaway (the controller's output stuck at full heat, no cooling), the heater
supply switched off from outside (a later simulated power supply drives it),
a failed cooler, and an optional independent over-temperature cut-out that
latches the heater off.

Sensor positions see a blend of air and load temperature, a spatial offset
proportional to T_air − T_amb (a chamber's spatial gradient grows with its
distance from ambient) and AR(1) noise. The noise is drawn in blocks aligned
to absolute step numbers from one seeded generator, so the series at each
step depends only on the seed, never on when or how often it is asked for.

Pure: no clock, no I/O; time is passed in (``advance_to``).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field, fields

import numpy as np
import numpy.typing as npt

from soaklog.errors import InputError
from soaklog.simulators.profiles import LAB_AMBIENT_C, Phase, Profile

__all__ = ["ChamberParams", "Position", "ChamberState", "ChamberModel", "transition_matrix"]

FloatArray = npt.NDArray[np.float64]

#: steps per set-point evaluation: the profile is evaluated vectorised per chunk
_CHUNK = 4096
#: steps per noise block (a Toeplitz product per block; see _noise_block)
_NOISE_BLOCK = 256


@dataclass(frozen=True)
class ChamberParams:
    """Physical and control parameters of a chamber (SI units).

    The defaults describe an invented bench-top chamber of about 0.2 m³ with
    a few kilograms of aluminium fixtures and power modules inside:

    - ``c_air_j_per_k`` 15 kJ/K: the air plus the fan, evaporator and shelves
      that follow it closely (air alone is about 1.2 kJ/(m³·K)).
    - ``c_load_j_per_k`` 4 kJ/K: about 4.5 kg of aluminium (0.9 J/(g·K)).
    - ``g_air_load_w_per_k`` 20 W/K: forced convection, about 25 W/(m²·K)
      over 0.8 m² of fixture surface; τ_load = C_load/G_al = 200 s.
    - ``g_wall_w_per_k`` 5 W/K: insulated walls, door seal and cable port.
    - ``g_door_w_per_k`` 120 W/K: extra loss while the door is open.
    - ``heater_max_w`` 5 kW and ``cooler_max_w`` 4.5 kW: enough for a
      10 K/min ramp of this air and load.

    These are orders of magnitude typical of such chambers (common practice,
    no published source), not the data of any product.

    Attributes:
        kp_w_per_k, ti_s: the PI controller: proportional gain and integral time.
        probe_tau_s: time constant of the control probe (it lags the air).
        cutout_c: independent over-temperature cut-out (latches the heater
            off above this air temperature), or None for none.
        step_s: the fixed internal step in seconds.
        noise_tau_s: correlation time of the sensor-position noise.
    """

    c_air_j_per_k: float = 15_000.0
    c_load_j_per_k: float = 4_000.0
    g_air_load_w_per_k: float = 20.0
    g_wall_w_per_k: float = 5.0
    g_door_w_per_k: float = 120.0
    heater_max_w: float = 5_000.0
    cooler_max_w: float = 4_500.0
    ambient_c: float = LAB_AMBIENT_C
    kp_w_per_k: float = 1_500.0
    ti_s: float = 240.0
    probe_tau_s: float = 6.0
    cutout_c: float | None = None
    step_s: float = 1.0
    noise_tau_s: float = 30.0

    def __post_init__(self) -> None:
        for f in fields(self):
            value = getattr(self, f.name)
            if f.name == "cutout_c" and value is None:
                continue
            if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(
                value
            ):
                raise InputError(f"chamber parameter {f.name} must be a finite number, got {value!r}")
        positive = (
            "c_air_j_per_k",
            "c_load_j_per_k",
            "g_wall_w_per_k",
            "kp_w_per_k",
            "ti_s",
            "probe_tau_s",
            "step_s",
            "noise_tau_s",
        )
        for name in positive:
            if getattr(self, name) <= 0:
                raise InputError(f"chamber parameter {name} must be > 0, got {getattr(self, name)!r}")
        for name in ("g_air_load_w_per_k", "g_door_w_per_k", "heater_max_w", "cooler_max_w"):
            if getattr(self, name) < 0:
                raise InputError(f"chamber parameter {name} must be ≥ 0, got {getattr(self, name)!r}")

    def g_loss_w_per_k(self, door_open: bool = False) -> float:
        """Loss conductance to the laboratory in W/K."""
        return self.g_wall_w_per_k + (self.g_door_w_per_k if door_open else 0.0)

    def system_matrix(self, door_open: bool = False) -> FloatArray:
        """The 2×2 matrix A of the module docstring (per second)."""
        g_al = self.g_air_load_w_per_k
        g = self.g_loss_w_per_k(door_open)
        return np.array(
            [
                [-(g_al + g) / self.c_air_j_per_k, g_al / self.c_air_j_per_k],
                [g_al / self.c_load_j_per_k, -g_al / self.c_load_j_per_k],
            ],
            dtype=np.float64,
        )

    def eigenvalues(self, door_open: bool = False) -> tuple[float, float]:
        """The two real eigenvalues of A, slow one first (per second, both negative).

        λ = (tr ± √(tr² − 4·det)) / 2; the discriminant equals
        (a11 − a22)² + 4·a12·a21 ≥ 0 because a12·a21 ≥ 0, so both are real.
        """
        a = self.system_matrix(door_open)
        tr = a[0, 0] + a[1, 1]
        disc = (a[0, 0] - a[1, 1]) ** 2 + 4.0 * a[0, 1] * a[1, 0]
        root = math.sqrt(disc)
        # the cancellation-free pair: the larger-magnitude root first, the other from det
        big = 0.5 * (tr - root)
        det = a[0, 0] * a[1, 1] - a[0, 1] * a[1, 0]
        small = det / big
        return float(small), float(big)

    def time_constants_s(self, door_open: bool = False) -> tuple[float, float]:
        """The two time constants −1/λ in seconds, slow one first."""
        l1, l2 = self.eigenvalues(door_open)
        return -1.0 / l1, -1.0 / l2


def transition_matrix(params: ChamberParams, door_open: bool = False) -> FloatArray:
    """exp(A·h) for the step h = ``params.step_s``, by Sylvester's formula.

    For distinct eigenvalues λ1, λ2 of a 2×2 matrix,
    exp(A·h) = (e^{λ1 h}·(A − λ2 I) − e^{λ2 h}·(A − λ1 I)) / (λ1 − λ2);
    for (nearly) equal ones the limit e^{λh}·(I + (A − λI)·h).
    """
    a = params.system_matrix(door_open)
    h = params.step_s
    l1, l2 = params.eigenvalues(door_open)
    eye = np.eye(2, dtype=np.float64)
    if abs(l1 - l2) <= 1e-12 * max(abs(l1), abs(l2), 1e-300):
        lam = 0.5 * (l1 + l2)
        return np.asarray(math.exp(lam * h) * (eye + (a - lam * eye) * h), dtype=np.float64)
    e1, e2 = math.exp(l1 * h), math.exp(l2 * h)
    return np.asarray((e1 * (a - l2 * eye) - e2 * (a - l1 * eye)) / (l1 - l2), dtype=np.float64)


@dataclass(frozen=True)
class Position:
    """A place in the chamber where a sensor sits.

    Its true temperature is
    ``air_weight·T_air + (1 − air_weight)·T_load + gradient·(T_air − T_amb) + noise``.

    Attributes:
        name: a label such as "air-supply" or "module-3-case".
        air_weight: 1 for a probe in the air stream, near 0 for one bonded
            to the load.
        gradient: spatial offset per kelvin of (T_air − T_amb); negative
            where the place is pulled towards the laboratory (near the door
            or a wall), positive near the conditioner outlet.
        noise_k: standard deviation of the AR(1) noise in K.
    """

    name: str
    air_weight: float = 1.0
    gradient: float = 0.0
    noise_k: float = 0.02

    def __post_init__(self) -> None:
        if not isinstance(self.name, str) or not self.name.strip():
            raise InputError(f"position name must be a non-empty string, got {self.name!r}")
        for name in ("air_weight", "gradient", "noise_k"):
            value = getattr(self, name)
            if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(
                value
            ):
                raise InputError(f"position {self.name!r}: {name} must be a finite number, got {value!r}")
        if not 0.0 <= self.air_weight <= 1.0:
            raise InputError(f"position {self.name!r}: air_weight must be within 0…1, got {self.air_weight!r}")
        if self.noise_k < 0:
            raise InputError(f"position {self.name!r}: noise_k must be ≥ 0 K, got {self.noise_k!r}")


@dataclass(frozen=True)
class ChamberState:
    """The chamber at one step (powers are those applied during the step that ended there)."""

    t_s: float
    setpoint_c: float
    air_c: float
    load_c: float
    probe_c: float
    heater_w: float
    cooler_w: float
    phase: Phase
    door_open: bool
    runaway: bool
    heater_supply_enabled: bool
    cooler_failed: bool
    cutout_tripped: bool
    manual_power_w: float | None = None


@dataclass
class _Noise:
    """AR(1) noise of all positions, generated block by block from one generator."""

    phi: float
    sigma: FloatArray
    rng: np.random.Generator
    toeplitz: FloatArray = field(init=False)
    powers: FloatArray = field(init=False)
    block: int = -1
    values: FloatArray = field(init=False)
    last: FloatArray = field(init=False)

    def __post_init__(self) -> None:
        j = np.arange(_NOISE_BLOCK)
        lag = j[:, None] - j[None, :]
        with np.errstate(over="ignore"):
            self.toeplitz = np.where(lag >= 0, self.phi ** np.maximum(lag, 0), 0.0).astype(np.float64)
        self.powers = (self.phi ** (j + 1)).astype(np.float64)
        # start in the stationary distribution, so there is no warm-up transient
        self.last = self.sigma * self.rng.standard_normal(self.sigma.size)
        self.values = np.zeros((_NOISE_BLOCK, self.sigma.size), dtype=np.float64)

    def _next(self) -> None:
        # x_j = φ·x_{j−1} + s·e_j  unrolled over a block:
        # x_j = φ^{j+1}·x_{−1} + Σ_{i≤j} φ^{j−i}·s·e_i
        e = self.rng.standard_normal((_NOISE_BLOCK, self.sigma.size))
        scale = self.sigma * math.sqrt(1.0 - self.phi * self.phi)
        self.values = (self.toeplitz @ e) * scale + self.powers[:, None] * self.last[None, :]
        self.last = self.values[-1].copy()
        self.block += 1

    def at(self, k: int) -> FloatArray:
        """Noise of every position at step ``k`` (k never earlier than the current block)."""
        b = k // _NOISE_BLOCK
        if b < self.block:
            raise RuntimeError("noise asked for a step before the current block")
        while self.block < b:
            self._next()
        return self.values[k - b * _NOISE_BLOCK]


class ChamberModel:
    """The chamber, stepped at a fixed internal step up to a time passed in.

    Args:
        params: physics and control (``ChamberParams``).
        profile: the set-point profile; None leaves the controller off (use
            ``set_manual_power``).
        positions: the sensor positions, by name.
        seed: seeds the position noise; same seed, same series.
        air_c, load_c: initial temperatures (default: the ambient).
    """

    def __init__(
        self,
        params: ChamberParams | None = None,
        profile: Profile | None = None,
        positions: Sequence[Position] = (),
        *,
        seed: int = 0,
        air_c: float | None = None,
        load_c: float | None = None,
    ) -> None:
        self.params = params or ChamberParams()
        self.profile = profile
        names = [p.name for p in positions]
        if len(set(names)) != len(names):
            raise InputError(f"position names must be unique, got {names}")
        self._positions = {p.name: i for i, p in enumerate(positions)}
        self._position_list = tuple(positions)
        p = self.params
        self._phi = {False: transition_matrix(p, False), True: transition_matrix(p, True)}
        self._k = 0
        self._air = float(p.ambient_c if air_c is None else air_c)
        self._load = float(p.ambient_c if load_c is None else load_c)
        self._probe = self._air
        self._integral = 0.0
        self._heater_w = 0.0
        self._cooler_w = 0.0
        self._door_until_k = 0
        self._runaway = False
        self._supply = True
        self._cooler_failed = False
        self._cutout = False
        self._manual: float | None = None if profile is not None else 0.0
        self._noise = _Noise(
            phi=math.exp(-p.step_s / p.noise_tau_s),
            sigma=np.asarray([q.noise_k for q in positions], dtype=np.float64),
            rng=np.random.default_rng(np.random.SeedSequence(seed)),
        )

    # ------------------------------------------------------------ time

    @property
    def t_s(self) -> float:
        """Simulated time of the present state (a whole number of steps)."""
        return self._k * self.params.step_s

    @property
    def steps(self) -> int:
        return self._k

    def advance_to(self, t_s: float) -> int:
        """Step forward to the last whole step at or before ``t_s``; returns the steps taken.

        A time in the past is not an error: the model stays where it is.
        """
        if isinstance(t_s, bool) or not isinstance(t_s, (int, float)) or math.isnan(t_s):
            raise InputError(f"t_s must be a number of seconds, got {t_s!r}")
        target = math.floor(t_s / self.params.step_s + 1e-9)
        n = target - self._k
        if n > 0:
            self._run(n, None)
        return max(n, 0)

    def step(self, dt_s: float | None = None) -> int:
        """Step forward by ``dt_s`` seconds (one internal step when None)."""
        if dt_s is None:
            self._run(1, None)
            return 1
        return self.advance_to(self.t_s + dt_s)

    def trace(self, until_s: float, every_s: float | None = None) -> dict[str, FloatArray]:
        """Step to ``until_s`` and return the series on the way, sampled every ``every_s``.

        Returns arrays ``t_s``, ``setpoint_c``, ``air_c``, ``load_c``,
        ``heater_w``, ``cooler_w`` and ``pos:<name>`` for each position; the
        first sample is the present state, before any step.
        """
        target = math.floor(until_s / self.params.step_s + 1e-9)
        n = max(target - self._k, 0)
        k0 = self._k
        rec: list[tuple[float, float, float, float]] = [
            (self._air, self._load, self._heater_w, self._cooler_w)
        ]
        self._run(n, rec)
        arr = np.asarray(rec, dtype=np.float64)
        every = max(1, round((every_s or self.params.step_s) / self.params.step_s))
        idx = np.arange(0, arr.shape[0], every)
        out = {"t_s": (k0 + idx).astype(np.float64) * self.params.step_s}
        if self.profile is not None:
            out["setpoint_c"] = self.profile.setpoint_c(out["t_s"])
        else:
            out["setpoint_c"] = np.full(idx.size, np.nan, dtype=np.float64)
        for i, key in enumerate(("air_c", "load_c", "heater_w", "cooler_w")):
            out[key] = arr[idx, i].copy()
        if self._position_list:
            noise = np.empty((arr.shape[0], len(self._position_list)), dtype=np.float64)
            for j in range(arr.shape[0]):
                noise[j] = self._noise.at(k0 + j)
            sampled = noise[idx]
            for i, pos in enumerate(self._position_list):
                out[f"pos:{pos.name}"] = self._blend(pos, out["air_c"], out["load_c"]) + sampled[:, i]
        return out

    # ------------------------------------------------------------ state

    def _setpoint(self, t_s: float) -> float:
        if self.profile is None:
            return math.nan
        return float(self.profile.setpoint_c(t_s))

    def state(self) -> ChamberState:
        """The present state."""
        t = self.t_s
        phase = self.profile.phase(t) if self.profile is not None else Phase("manual", 0, 0)
        return ChamberState(
            t_s=t,
            setpoint_c=self._setpoint(t),
            air_c=self._air,
            load_c=self._load,
            probe_c=self._probe,
            heater_w=self._heater_w,
            cooler_w=self._cooler_w,
            phase=phase,
            door_open=self._k < self._door_until_k,
            runaway=self._runaway,
            heater_supply_enabled=self._supply,
            cooler_failed=self._cooler_failed,
            cutout_tripped=self._cutout,
            manual_power_w=self._manual,
        )

    @property
    def positions(self) -> tuple[Position, ...]:
        return self._position_list

    def _blend(self, pos: Position, air: FloatArray | float, load: FloatArray | float) -> FloatArray:
        amb = self.params.ambient_c
        w = pos.air_weight
        return np.asarray(w * air + (1.0 - w) * load + pos.gradient * (air - amb), dtype=np.float64)

    def position_c(self, name: str) -> float:
        """True temperature at position ``name`` now, noise included.

        Raises:
            KeyError: an unknown position.
        """
        i = self._positions[name]
        pos = self._position_list[i]
        return float(self._blend(pos, self._air, self._load)) + float(self._noise.at(self._k)[i])

    def positions_c(self) -> dict[str, float]:
        """True temperature at every position now."""
        noise = self._noise.at(self._k)
        return {
            p.name: float(self._blend(p, self._air, self._load)) + float(noise[i])
            for i, p in enumerate(self._position_list)
        }

    # ------------------------------------------------------------ faults and switches

    def open_door(self, duration_s: float) -> None:
        """Open the door now for ``duration_s`` seconds (extra loss ``g_door_w_per_k``)."""
        if isinstance(duration_s, bool) or not isinstance(duration_s, (int, float)) or not (
            math.isfinite(duration_s) and duration_s >= 0
        ):
            raise InputError(f"door open duration must be a finite number ≥ 0 s, got {duration_s!r}")
        self._door_until_k = self._k + math.ceil(duration_s / self.params.step_s - 1e-9)

    def close_door(self) -> None:
        self._door_until_k = self._k

    @property
    def door_open(self) -> bool:
        return self._k < self._door_until_k

    def set_runaway(self, on: bool) -> None:
        """Heater runaway: the controller's output stuck at full heat, no cooling."""
        self._runaway = bool(on)

    @property
    def runaway(self) -> bool:
        return self._runaway

    @property
    def heater_supply_enabled(self) -> bool:
        """The external heater supply switch; False cuts the heater whatever the controller says."""
        return self._supply

    @heater_supply_enabled.setter
    def heater_supply_enabled(self, on: bool) -> None:
        self._supply = bool(on)

    def set_cooler_failed(self, failed: bool) -> None:
        """A failed cooler delivers no cooling power."""
        self._cooler_failed = bool(failed)

    @property
    def cooler_failed(self) -> bool:
        return self._cooler_failed

    @property
    def cutout_tripped(self) -> bool:
        return self._cutout

    def reset_cutout(self) -> None:
        """Reset a latched over-temperature cut-out (by hand, as on a real chamber)."""
        self._cutout = False

    def clear_faults(self) -> None:
        """Close the door, end runaway, repair the cooler and reset the cut-out.

        The heater supply switch is not a fault and keeps its position.
        """
        self.close_door()
        self._runaway = False
        self._cooler_failed = False
        self._cutout = False

    def set_manual_power(self, power_w: float | None) -> None:
        """Drive a fixed net power (heater > 0, cooler < 0) instead of the controller.

        None hands control back to the profile's controller (which restarts
        from an empty integral). Limits, faults and the supply switch still apply.
        """
        if power_w is None:
            if self.profile is None:
                raise InputError("no profile to follow: give the chamber a profile or a power")
            self._manual = None
            self._integral = 0.0
            return
        if isinstance(power_w, bool) or not isinstance(power_w, (int, float)) or not math.isfinite(
            power_w
        ):
            raise InputError(f"manual power must be a finite number of watts, got {power_w!r}")
        self._manual = float(power_w)

    # ------------------------------------------------------------ the loop

    def _run(self, n: int, rec: list[tuple[float, float, float, float]] | None) -> None:
        """Take ``n`` steps; append (air, load, heater, cooler) after each to ``rec`` if given."""
        p = self.params
        h = p.step_s
        amb = p.ambient_c
        kp = p.kp_w_per_k
        ki_h = p.kp_w_per_k / p.ti_s * h
        hi = p.heater_max_w
        lo = -p.cooler_max_w
        beta = 1.0 - math.exp(-h / p.probe_tau_s)
        g_closed = p.g_loss_w_per_k(False)
        g_open = p.g_loss_w_per_k(True)
        (c11, c12), (c21, c22) = self._phi[False].tolist()
        (o11, o12), (o21, o22) = self._phi[True].tolist()
        cutout = math.inf if p.cutout_c is None else p.cutout_c

        ta, tl, probe, integ = self._air, self._load, self._probe, self._integral
        heat, cool = self._heater_w, self._cooler_w
        manual = self._manual
        runaway, supply, cooler_ok = self._runaway, self._supply, not self._cooler_failed
        tripped = self._cutout
        door_until = self._door_until_k
        k = self._k
        profile = self.profile
        done = 0
        while done < n:
            m = min(n - done, _CHUNK)
            if manual is None and profile is not None:
                t = (k + np.arange(m, dtype=np.float64)) * h
                setpoints = profile.setpoint_c(t).tolist()
            else:
                setpoints = [math.nan] * m
            for sp in setpoints:
                # controller: acts on the probe at the start of the step
                if manual is not None:
                    u = manual
                    if u > hi:
                        u = hi
                    elif u < lo:
                        u = lo
                else:
                    e = sp - probe
                    new_integ = integ + ki_h * e
                    u = kp * e + new_integ
                    # conditional integration: never wind further into a limit
                    if u > hi:
                        u = hi
                        if e > 0.0:
                            new_integ = integ
                    elif u < lo:
                        u = lo
                        if e < 0.0:
                            new_integ = integ
                    integ = new_integ
                if runaway:
                    heat, cool = hi, 0.0
                elif u >= 0.0:
                    heat, cool = u, 0.0
                else:
                    heat, cool = 0.0, -u
                if not supply or tripped:
                    heat = 0.0
                if not cooler_ok:
                    cool = 0.0
                # exact step with the power held: relax towards the steady state
                if k < door_until:
                    d = amb + (heat - cool) / g_open
                    ea, el = ta - d, tl - d
                    ta = d + o11 * ea + o12 * el
                    tl = d + o21 * ea + o22 * el
                else:
                    d = amb + (heat - cool) / g_closed
                    ea, el = ta - d, tl - d
                    ta = d + c11 * ea + c12 * el
                    tl = d + c21 * ea + c22 * el
                probe += beta * (ta - probe)
                if ta > cutout:
                    tripped = True
                k += 1
                if rec is not None:
                    rec.append((ta, tl, heat, cool))
            done += m
        self._air, self._load, self._probe, self._integral = ta, tl, probe, integ
        self._heater_w, self._cooler_w = heat, cool
        self._cutout = tripped
        self._k = k
