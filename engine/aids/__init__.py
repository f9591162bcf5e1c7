"""Design aids: sensitivity ranking, fixes from preferred values, and the series themselves."""
