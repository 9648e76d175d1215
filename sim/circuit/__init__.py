"""railfault: circuit."""
