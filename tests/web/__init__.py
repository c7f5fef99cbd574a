"""What the review pages compute without a browser: units, CSV, comparisons, safe redirects."""
