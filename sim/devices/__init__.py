"""railfault: devices."""
