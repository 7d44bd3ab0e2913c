"""Obvert thermal package."""
