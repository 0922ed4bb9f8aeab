"""Inference: population priors, likelihoods and the emcee sampler."""

__all__ = []
