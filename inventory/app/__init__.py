"""Application layer: use cases that read the store, call the pure core and return plain
records for the command line, the workbooks and other use cases (the planner).

Nothing here prints or writes files; the CLI and the reporting modules do that.
"""
