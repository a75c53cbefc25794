"""streakwise.dashboard."""
