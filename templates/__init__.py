"""Jinja templates and static assets of the Periplus site (installed as builder.templates)."""
