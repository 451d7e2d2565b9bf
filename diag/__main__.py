"""``python -m diag``: the command line."""
import gc
import sys

if __name__ == "__main__":
    # This process runs one command and ends.  The collector is paused while the command's modules load (their
    # objects live as long as the process) and resumed by ``main`` once they are loaded (``diag.cli._load_command``)
    gc.disable()
    from diag.cli import main

    status = main(one_process=True)
    # The process ends here: its objects are left to the operating system instead of being walked and collected,
    # module by module, by the interpreter's exit (issue 18: about 0.15-0.2 s of CPU after an analysis of a 1-s
    # week, a tenth of the process).  Every output file is written and closed by now; standard output and error are
    # still flushed and ``atexit`` handlers still run at exit (only objects in reference cycles are not finalised).
    gc.freeze()
    sys.exit(status)
