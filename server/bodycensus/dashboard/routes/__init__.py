"""HTTP routes: the JSON API and the HTML pages."""
