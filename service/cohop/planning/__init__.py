"""The planner: a constraint program that assigns hop sets (see DEVELOPERS.md)."""
