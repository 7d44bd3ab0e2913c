"""Obvert food package."""
