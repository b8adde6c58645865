"""Structural breaks: Bai–Perron partitions, break tests, break-date intervals, panel screening."""
