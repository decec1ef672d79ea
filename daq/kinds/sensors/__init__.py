"""Built-in sensors kinds, one module each (see soaklog.kinds)."""
