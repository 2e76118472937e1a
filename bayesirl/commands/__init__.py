"""What each ``bayesirl`` sub-command does (the parser and error handling are in ``cli``)."""
