"""The file formats: chain and preset files read with located problems, values, schema, edits that keep the user's layout."""
