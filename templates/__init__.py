"""The jinja2 templates and CSS of the printed summary (package data)."""
