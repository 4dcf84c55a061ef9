"""Pure statistics: time overlap, collision combination, retries."""
