"""Obvert spec package."""
