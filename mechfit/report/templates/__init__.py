"""Templates of the report writers (jinja2)."""
