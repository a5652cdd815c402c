"""The command line: thin shells that parse options, call the library and render."""
