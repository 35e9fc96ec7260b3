"""The check job: a reviewer's consistency check of published numbers."""
