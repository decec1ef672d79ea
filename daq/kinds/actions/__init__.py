"""Built-in actions kinds, one module each (see soaklog.kinds)."""
