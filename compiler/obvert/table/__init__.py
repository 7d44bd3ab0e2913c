"""Obvert table package."""
