"""Renderers: pure functions from stage results to text. They compute nothing new."""
