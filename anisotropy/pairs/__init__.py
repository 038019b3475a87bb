"""The pair engine (see issue 3): one compiled pass over all pairs."""
