"""Sub-commands of the command line; each module has add_arguments(parser) and run(args)."""
