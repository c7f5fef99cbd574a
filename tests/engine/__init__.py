"""Engine checks against sources outside the project."""
