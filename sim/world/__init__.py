"""railfault: world."""
