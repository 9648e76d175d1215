"""railfault: checks."""
