"""Wright's stationary distribution under drift and its sampling integrals."""
