"""Obvert emit package."""
