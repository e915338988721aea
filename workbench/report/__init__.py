"""Display of results: HTML pieces, method texts written once, and the fit report."""
