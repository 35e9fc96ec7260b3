"""``qhat compare``: a study's data weighed under competing models by their evidence."""
