"""Runs over many inputs: libraries (batch), trajectories, the demo."""
