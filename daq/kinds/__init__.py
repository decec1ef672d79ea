"""Families of kinds — instruments, sensor types, alarm rules, actions, profiles — each kind one module.

A station file chooses a kind in each section by one key (``driver`` of an
``[[instrument]]``, ``type`` of a ``[[sensor]]``, ``kind`` of an ``[[alarm]]``,
of an alarm's action and of the ``[profile]``). The kind's module, in the
family's folder here (``soaklog/kinds/instruments/scpi.py``, …), declares
its keys and their defaults, validates them by file and key, and provides
its runtime part (a driver imported lazily, a rule's test, an action's
runner). The configuration walker (``soaklog.config``), the service, the
dashboard and the report ask the kind; none of them branches on a kind's
name. Adding a kind is one module (with its tests and its docs): the family
finds every module of its folder the first time it is asked, and a module
elsewhere (a test's, a lab's own) registers itself by importing it.

Like pyvisa's resource classes (registered by interface type) and
sqlite-utils' plugin hooks: the core knows the protocol, not the kinds.
"""

from __future__ import annotations

import importlib
import pkgutil
import threading
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from typing import Any, Generic, TypeVar

__all__ = ["Family", "INSTRUMENTS", "SENSORS", "ALARM_RULES", "ACTIONS", "PROFILES"]

T = TypeVar("T")


class Family(Generic[T]):
    """The registered kinds of one family, by name.

    Args:
        section: the station file's section the family configures (``instrument``).
        selector: the key that names the kind in that section (``driver``).
        package: the folder of the built-in kinds, imported on first use.
    """

    def __init__(self, section: str, selector: str, package: str) -> None:
        self.section = section
        self.selector = selector
        self.package = package
        self._kinds: dict[str, T] = {}
        self._loaded = False
        self._lock = threading.Lock()

    def register(self, name: str) -> Callable[[type[T]], type[T]]:
        """A class decorator: the kind ``name`` is an instance of the class (made once, here).

        Raises:
            ValueError: another kind of the family has that name.
        """

        def add(cls: type[T]) -> type[T]:
            kind = cls()
            if getattr(kind, "name", name) != name:
                raise ValueError(f"{cls.__name__} is registered as {name!r} but names itself {kind.name!r}")  # type: ignore[attr-defined]
            existing = self._kinds.get(name)
            if existing is not None and type(existing).__qualname__ != cls.__qualname__:
                raise ValueError(f"two {self.section} kinds are named {name!r}: "
                                 f"{type(existing).__module__} and {cls.__module__}")
            self._kinds[name] = kind
            return cls

        return add

    def unregister(self, name: str) -> None:
        """Forget a kind (for tests that add one of their own)."""
        self._kinds.pop(name, None)

    @contextmanager
    def added(self, name: str, cls: type[T]) -> Iterator[T]:
        """The kind registered for the duration of a ``with`` block (for tests)."""
        self.load()
        self.register(name)(cls)
        try:
            yield self._kinds[name]
        finally:
            self.unregister(name)

    def load(self) -> None:
        """Import every built-in kind module of the family (once)."""
        if self._loaded:
            return
        with self._lock:
            if self._loaded:
                return
            pkg = importlib.import_module(self.package)
            for info in sorted(pkgutil.iter_modules(pkg.__path__), key=lambda m: m.name):
                if not info.name.startswith("_"):
                    importlib.import_module(f"{self.package}.{info.name}")
            self._loaded = True

    def get(self, name: str) -> T | None:
        self.load()
        return self._kinds.get(name)

    def __getitem__(self, name: str) -> T:
        kind = self.get(name)
        if kind is None:
            raise KeyError(f"no {self.section} {self.selector} {name!r}; known: {', '.join(self.names())}")
        return kind

    def __contains__(self, name: object) -> bool:
        return isinstance(name, str) and self.get(name) is not None

    def names(self) -> tuple[str, ...]:
        """The registered names, sorted."""
        self.load()
        return tuple(sorted(self._kinds))

    def items(self) -> list[tuple[str, T]]:
        self.load()
        return sorted(self._kinds.items())

    def __repr__(self) -> str:
        return f"Family({self.section}.{self.selector}: {', '.join(sorted(self._kinds)) or 'not loaded'})"


#: instrument drivers, chosen by ``[[instrument]] driver``
INSTRUMENTS: Family[Any] = Family("instrument", "driver", "soaklog.kinds.instruments")
#: sensor types, chosen by ``[[sensor]] type``
SENSORS: Family[Any] = Family("sensor", "type", "soaklog.kinds.sensors")
#: alarm rule kinds, chosen by ``[[alarm]] kind``
ALARM_RULES: Family[Any] = Family("alarm", "kind", "soaklog.kinds.alarms")
#: alarm action kinds, chosen by ``kind`` of an alarm's action
ACTIONS: Family[Any] = Family("action", "kind", "soaklog.kinds.actions")
#: test profile kinds, chosen by ``[profile] kind``
PROFILES: Family[Any] = Family("profile", "kind", "soaklog.kinds.profiles")
