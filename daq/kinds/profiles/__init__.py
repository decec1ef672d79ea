"""Built-in profiles kinds, one module each (see soaklog.kinds)."""
