"""Exit codes of the ``ookframe`` command, in one place."""

OK = 0
FAILED = 1  # the command ran but its verdict is negative (e.g. margin below target)
USAGE = 2  # bad command line
BAD_SPEC = 3  # spec file invalid
BAD_INPUT = 4  # capture / values / other input invalid
CODEGEN = 5  # C cannot be generated for this spec/target
EXISTS = 6  # output file exists and --force not given
INTERRUPTED = 130  # Ctrl-C (128 + SIGINT); stress prints what it counted so far
INTERNAL = 70  # a bug: reported with a hint to rerun with --debug
