"""Obvert review package."""
