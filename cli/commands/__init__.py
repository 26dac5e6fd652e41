"""The subcommands of ``platewright``: one module per command over the library functions, the base
classes they share (``base``), and the registry the entry point reads (``registry.COMMANDS``).
Takes parsed arguments; gives an exit status (0 done, 1 a limit failed, 2 refused, 3 crashed).
"""
