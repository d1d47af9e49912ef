"""The outside world into plain numbers: fitted models (one file a library) and data files."""
