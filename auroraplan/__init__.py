"""Plan aurora-viewing excursions from Kp, darkness, moonlight, cloud and horizons."""

__version__ = "0.1.0"
