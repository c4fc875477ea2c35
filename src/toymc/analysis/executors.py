"""Where the tasks of a scan run: inline (one worker), local worker processes, or a
dask.distributed cluster.

:func:`executor` returns ``(run_all, close)``: ``run_all(tasks)`` yields each task's
result as it finishes (in any order); ``close(abort=False)`` ends the workers, at once
when ``abort`` is set (an error or a signal stopped the scan).
"""

from toymc.errors import ConfigError, ToymcError

__all__ = ("executor",)


def executor(task, workers, scheduler, timeout=5.0):
    """(submit-all function, close function) running `task` (a module-level function, so
    that worker processes and Dask can pickle it) with the chosen executor.

    Parameters
    ----------
    task : callable
        Called with one task description; returns its result.
    workers : int
        Local worker processes (1: inline, in this process); ignored with `scheduler`.
    scheduler : str or None
        Address of a dask.distributed scheduler.
    timeout : float
        Seconds to wait for the scheduler.
    """
    if scheduler:
        try:
            from distributed import Client, as_completed
        except ImportError:
            raise ToymcError('--scheduler needs dask.distributed: pip install "toymc[dist]"') from None
        try:
            client = Client(scheduler, timeout=f"{timeout}s")
        except (OSError, TimeoutError) as exc:
            raise ToymcError(f"cannot reach the Dask scheduler at {scheduler} within {timeout:g} s "
                             f"({type(exc).__name__})") from None
        except (ValueError, TypeError) as exc:
            raise ConfigError(None, "--scheduler", scheduler, "a scheduler address such as "
                              f"tcp://host:8786 ({exc})") from None

        def run_all(tasks):
            futs = client.map(task, tasks, pure=False)
            for f in as_completed(futs):
                yield f.result()

        return run_all, lambda abort=False: client.close()
    if workers == 1:
        return (lambda tasks: (task(t) for t in tasks)), (lambda abort=False: None)
    from concurrent.futures import ProcessPoolExecutor, as_completed
    from concurrent.futures.process import BrokenProcessPool

    from toymc.io.signals import on_stop, worker_init

    pool = ProcessPoolExecutor(max_workers=workers, initializer=worker_init)

    def run_all(tasks):
        futs = [pool.submit(task, t) for t in tasks]
        for f in as_completed(futs):
            try:
                yield f.result()
            except BrokenProcessPool:
                raise ToymcError("scan: a worker process ended unexpectedly (killed, or out of "
                                 "memory); finished masses are kept in the index: continue "
                                 "with --resume") from None

    def stop_workers():
        # SIGTERM each worker: it removes its temporary file and exits (toymc.io.signals)
        procs = list((getattr(pool, "_processes", None) or {}).values())
        for proc in procs:
            if proc.is_alive():
                proc.terminate()
        for proc in procs:
            proc.join(timeout=60)
            if proc.is_alive():
                proc.kill()

    stop = on_stop(stop_workers)  # also when a signal stops this process
    stop.__enter__()

    def close(abort=False):
        try:
            if abort:
                stop_workers()
                pool.shutdown(wait=False, cancel_futures=True)
            else:
                pool.shutdown(cancel_futures=True)
        finally:
            stop.__exit__(None, None, None)

    return run_all, close
