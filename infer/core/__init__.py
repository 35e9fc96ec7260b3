"""Pure maths on numpy arrays: equilibria, approximations, supports, drift, Wright-Fisher."""
