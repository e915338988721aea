"""The data model: spectra on a wavelength grid, and the design schema."""
