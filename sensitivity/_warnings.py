class SensitivityWarning(UserWarning):
    """Legal input whose result needs a caveat (robust standard errors, a capped bound, ...)."""
