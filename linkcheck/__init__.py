"""linkcheck: check and fix the mass properties of robot descriptions against their geometry."""

__version__ = "0.1.0"
