"""Pure fitting: arrays in, parameters out (see issue 4)."""
