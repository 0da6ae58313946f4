"""Shared ground of every stage: the project's exception types."""
