"""Report stage: render results and findings as text, JSON, CSV, HTML and Markdown."""
