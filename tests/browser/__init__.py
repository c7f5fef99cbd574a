"""The review pages in headless Chromium, against a real API process."""
