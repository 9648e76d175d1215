"""railfault: report."""
