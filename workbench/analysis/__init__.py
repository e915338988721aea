"""Analyses of a camera design: measures, the colour pipeline, the evaluator and fit,
tolerances, light sources on camera, and batch rendering of spectral images."""
