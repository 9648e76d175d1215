"""What-if analyses: named cases side by side, and sweeps."""
