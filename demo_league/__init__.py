"""streakwise.demo_league."""
