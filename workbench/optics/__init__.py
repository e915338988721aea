"""Optical elements of a camera's colour-separation chain and their spectral curves."""
