"""The batch job: many loci at once by exact one-dimensional quadrature."""
