"""One module per subcommand of the ``workbench`` command line."""
