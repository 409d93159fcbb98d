"""The engine: a planned session's steps, the exponential integrator and reading a trace against the limits."""
