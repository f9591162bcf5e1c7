"""The shipped demo chains (package data, found beside this file)."""
