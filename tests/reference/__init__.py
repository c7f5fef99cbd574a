"""Independent reference solutions for the thermal engine: analytic series and a method-of-lines solver."""
