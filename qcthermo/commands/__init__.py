"""One module per sub-command; each has ``main(args) -> exit status``."""
