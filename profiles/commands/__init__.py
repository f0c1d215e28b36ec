"""One module per command; each defines NAME, HELP, DESCRIPTION, add_arguments() and run()."""
