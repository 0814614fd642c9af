"""Make: the bench-logging pages, one form per fabrication step, each calling one service."""
