"""Obvert demo package."""
