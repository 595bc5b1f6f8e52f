"""Inference: run config, priors, the vectorized log-posterior, emcee driver, chain, posterior.

Nothing here draws figures or knows the fit folder's file names beyond the chain file.
"""
