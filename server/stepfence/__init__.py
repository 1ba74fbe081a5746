"""stepfence: absolute-stability regions and exact step limits for time-stepping schemes."""
__version__ = "0.1.0"
