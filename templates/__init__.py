"""jinja2 templates of the HTML reports (installed as the package ``budget.templates``)."""
