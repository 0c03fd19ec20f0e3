"""Studies built on the public API: calibration, sweeps, sensitivities, uncertainty, scale-out."""
