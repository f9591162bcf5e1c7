"""The file formats: chain and preset files read with located problems, values, schema, edits."""
