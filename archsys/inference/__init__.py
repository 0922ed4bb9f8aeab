"""Inference: population priors, likelihoods and the emcee sampler."""
