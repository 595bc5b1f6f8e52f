"""Physics: local conditions -> sheet equilibrium -> dimensionless dispersion kernel -> fastest mode.

Cgs floats and dimensionless arrays inside; :func:`infer.predict` is the Quantity front door.
"""
