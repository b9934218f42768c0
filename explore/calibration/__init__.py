"""Calibration from filmed drops: tracks in, restitution and friction out."""
