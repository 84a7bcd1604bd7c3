"""The mesh-convergence study: mesh → solve → estimate → refine → extrapolate."""
