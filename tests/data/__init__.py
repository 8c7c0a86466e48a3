"""Invented campaigns for the loader tests."""
