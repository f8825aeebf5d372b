"""Screens of partsel's terminal UI."""
