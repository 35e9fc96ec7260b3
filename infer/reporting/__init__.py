"""Rendering of results: text, JSON, Markdown, plots, report folders."""
