"""Built-in alarms kinds, one module each (see soaklog.kinds)."""
