"""Obvert plan package."""
