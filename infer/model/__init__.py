"""The statistical model: parameter state, priors, observation kinds, log posterior."""
