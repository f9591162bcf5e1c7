"""The walks: a loaded chain prepared, then carried stage by stage as bounds or as drawn circuits."""
