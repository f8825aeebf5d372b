"""Widgets of partsel's terminal UI."""
