"""Kernels: starting an ipykernel of this interpreter, driving it, and keeping one per batch worker.

Every sheet, built alone or as a case of a batch, goes through the same steps
in its kernel: the kernel starts in a private temporary folder and runs a
warm-up once (:func:`~calckit.workflow.kernel_state.kernel_warm_up`: it imports matplotlib with the Agg
backend, numpy, sympy and all of calckit, and records the state a template can
change); before the sheet's cells run, a reset (:func:`~calckit.workflow.kernel_state.kernel_reset`) puts
that state back; then the template's cells and the save cell run. A build
uses its kernel once and kills it. A batch worker keeps its kernel and runs
the next case in it after the same reset, so that a case costs the template's
own work, not a kernel start and the imports (seconds).


The warm-up and the reset run inside the kernel and live in
:mod:`calckit.workflow.kernel_state`; this module is the building process's
side: the kernel manager (:func:`kernel_manager`), the environment
(:func:`kernel_env`), :class:`Kernel`, the event loop a kept kernel lives on
(:func:`run_sync`) and the kept kernels (:func:`run_in_kept_kernel`), killed
when the process exits.

A kernel dies with the process that started it, whatever ends that process
(SIGKILL included): on Linux the kernel starts through :data:`KERNEL_LAUNCH`,
which asks the system for SIGKILL when its parent dies (``PR_SET_PDEATHSIG``).
The system sends it when the *thread* that started the kernel ends, so a kernel
is started by the thread that uses it: a build's (the main thread, or the thread
:func:`run_sync` runs a notebook's build in, which outlives the kernel) or a batch
worker's (a kept kernel lives on its thread's event loop, and is of no use after
it). The batch's worker processes die with the batch in the same way
(:func:`die_with_parent`), and their kernels with them.
"""

from __future__ import annotations

import asyncio
import atexit
import concurrent.futures as cf
import contextlib
import os
import shutil
import site
import sys
import tempfile
import threading
import time
import warnings
from collections.abc import Awaitable, Callable
from pathlib import Path
from typing import Any, TypeVar

from calckit.errors import BuildError

__all__ = [
    "KERNEL_START_TIMEOUT_S",
    "KERNEL_LAUNCH",
    "die_with_parent",
    "IN_KERNEL",
    "ResetError",
    "Kernel",
    "kernel_env",
    "kernel_manager",
    "loop_running",
    "run_sync",
    "start_kernel",
    "run_in_kept_kernel",
]

#: Seconds a kernel may take to start and import calckit.
KERNEL_START_TIMEOUT_S = 180

#: Environment variable that tells a kernel the process it must not outlive.
PARENT_PID_VAR = "CALCKIT_PARENT_PID"

#: What a kernel runs first, before ipykernel: on Linux it asks to be killed (SIGKILL) when the
#: thread that started it dies, by any signal, SIGKILL included (``prctl(PR_SET_PDEATHSIG)``,
#: kept across ``exec``), and ends at once if that process died before the request took hold.
#: Elsewhere the kernel starts as ``ipykernel_launcher`` does (the kernel then lives on a kill).
KERNEL_LAUNCH = (
    "import os, sys\n"
    "if sys.platform.startswith('linux'):\n"
    "    import ctypes, signal\n"
    "    try:\n"
    "        ctypes.CDLL(None, use_errno=True).prctl(1, int(signal.SIGKILL), 0, 0, 0)  # PR_SET_PDEATHSIG\n"
    "    except (OSError, AttributeError):\n"
    "        pass\n"
    f"    if os.environ.get({PARENT_PID_VAR!r}, str(os.getppid())) != str(os.getppid()):\n"
    "        os._exit(1)  # the build died while this kernel started\n"
    "del sys.path[0]  # the working folder, as ipykernel_launcher does\n"
    "from ipykernel import kernelapp\n"
    "kernelapp.launch_new_instance()\n"
)


def die_with_parent(parent: int | None = None) -> None:
    """Ask the system to kill this process (SIGKILL) when the one that started it dies (Linux only).

    The batch's worker processes run this first (the pool's initializer), so that a batch
    killed by any signal takes its workers with it, and they their kernels. A worker
    also leaves Ctrl-C to the batch, which ends the workers itself. *parent* is the
    process id of the batch, checked after the request (it may have died meanwhile).
    """
    import signal

    signal.signal(signal.SIGINT, signal.SIG_IGN)
    if not sys.platform.startswith("linux"):
        return
    import ctypes

    try:
        ctypes.CDLL(None, use_errno=True).prctl(1, int(signal.SIGKILL), 0, 0, 0)  # PR_SET_PDEATHSIG
    except (OSError, AttributeError):  # pragma: no cover - a libc without prctl
        return
    if parent is not None and parent != os.getppid():
        os._exit(1)  # pragma: no cover - the batch died while this worker started


#: Code that reaches the kernel's side (:mod:`calckit.workflow.kernel_state`) from inside the kernel;
#: a function's name and its call follow.
IN_KERNEL = "__import__('calckit.workflow.kernel_state', fromlist=['_'])."

_T = TypeVar("_T")


def kernel_env() -> dict[str, str]:
    """Environment of the kernel: this one, with calckit importable and quiet debugger checks."""
    env = dict(os.environ)
    root = str(Path(__file__).resolve().parents[2])  # the folder that holds calckit/
    installed = {str(Path(p).resolve()) for p in [*site.getsitepackages(), site.getusersitepackages()]}
    if root not in installed:
        env["PYTHONPATH"] = os.pathsep.join(p for p in (root, env.get("PYTHONPATH", "")) if p)
    env["PYDEVD_DISABLE_FILE_VALIDATION"] = "1"
    env[PARENT_PID_VAR] = str(os.getpid())
    env["MPLBACKEND"] = "Agg"
    return env


def kernel_manager() -> Any:
    """A kernel manager that starts ipykernel in the interpreter calckit runs in.

    A ``python3`` kernel spec found on the machine may point at another Python
    without calckit; this one cannot.
    """
    try:
        import ipykernel  # noqa: F401
    except ImportError as exc:
        raise BuildError(
            "running a template needs ipykernel, which is not installed",
            where="kernel python3",
            do="Install it in this environment: pip install ipykernel",
        ) from exc
    from jupyter_client.kernelspec import KernelSpec, KernelSpecManager
    from jupyter_client.manager import AsyncKernelManager

    class ThisPython(KernelSpecManager):
        def get_kernel_spec(self, kernel_name: str) -> KernelSpec:
            return KernelSpec(
                argv=[
                    sys.executable,
                    "-Xfrozen_modules=off",
                    "-c",
                    KERNEL_LAUNCH,
                    "-f",
                    "{connection_file}",
                ],
                display_name="Python 3 (calckit)",
                language="python",
            )

    return AsyncKernelManager(kernel_name="python3", kernel_spec_manager=ThisPython())


class ResetError(BuildError):
    """The kernel could not be put back to its warmed-up state (a kept kernel is then replaced)."""


class Kernel:
    """An ipykernel of this interpreter, driven through nbclient, that can run case after case."""

    def __init__(self) -> None:
        self.folder = Path(tempfile.mkdtemp(prefix="calckit-kernel-")).resolve()
        self.log = open(self.folder / "kernel.log", "wb")  # noqa: SIM115 (the kernel's stdout and stderr, a scratch file)
        self.km: Any = None
        self.kc: Any = None
        self.language_info: dict = {}
        self.cases = 0
        self.healthy = False
        self.running: int | None = None  # the index of the cell running (see :meth:`run`)
        self.timed_out = ""

    async def start(self) -> None:
        """Launch the kernel process; returns without waiting for it to be ready."""
        self.km = kernel_manager()
        await self.km.start_kernel(
            cwd=str(self.folder),
            env=kernel_env(),
            stdout=self.log,
            stderr=self.log,
            extra_arguments=["--HistoryManager.hist_file=:memory:"],
        )
        self.kc = self.km.client()

    async def warm_up(self) -> None:
        """Wait for the kernel, ask for its language (for the notebook), run the warm-up.

        The client's channels (and its heartbeat thread) start here, not in :meth:`start`:
        a build refused while the kernel starts then never has a heartbeat thread racing
        the teardown of its sockets.
        """
        self.kc.start_channels()
        await self.kc.wait_for_ready(timeout=KERNEL_START_TIMEOUT_S)
        reply = await self.kc.kernel_info(reply=True, timeout=KERNEL_START_TIMEOUT_S)
        self.language_info = reply["content"].get("language_info", {})
        await self._silent(IN_KERNEL + "kernel_warm_up()", KERNEL_START_TIMEOUT_S)
        self.healthy = True

    async def reset(self, folder: Path) -> None:
        """Put the kernel back to its warmed-up state, working in *folder* (raises if it cannot)."""
        try:
            await self._silent(IN_KERNEL + f"kernel_reset({str(folder)!r})", KERNEL_START_TIMEOUT_S)
        except BuildError as exc:
            raise ResetError(exc.what, where=exc.where, do=exc.do) from None

    async def _silent(self, code: str, timeout: float) -> None:
        """Run code of the build's own (no output, no history, no execution count)."""
        import queue

        try:
            reply = await self.kc.execute(code, silent=True, store_history=False, reply=True, timeout=timeout)
        except (TimeoutError, queue.Empty):
            self.healthy = False
            raise BuildError(
                f"the kernel did not answer within {timeout:g} s",
                where="kernel python3",
                do="Check that ipykernel works in this environment: python -m ipykernel_launcher --help",
            ) from None
        content = reply["content"]
        if content.get("status") != "ok":
            self.healthy = False
            raise BuildError(
                f"{content.get('ename', 'error')}: {content.get('evalue', '')}".strip(),
                where="kernel python3",
                do="Check that calckit imports in this environment: python -c 'import calckit'",
            )

    async def run(self, notebook: Any, timeout: int, time_limit: float | None = None) -> None:
        """Run every cell of *notebook* as nbclient's ``execute`` does, in this kernel.

        A cell may run *timeout* seconds, and all the cells together *time_limit*
        seconds (none: no limit but the cells'); past either, nbclient's
        ``CellTimeoutError`` is raised, :attr:`running` says which cell ran and
        :attr:`timed_out` which limit ended it (``"cell"`` or ``"case"``).
        """
        import math

        from nbclient import NotebookClient

        self.cases += 1
        self.healthy = False  # until the notebook has run to its end
        self.running = None
        self.timed_out = ""
        deadline = None if time_limit is None else time.monotonic() + time_limit

        def cell_limit(cell: Any) -> int:  # nbclient counts whole seconds
            left = math.inf if deadline is None else deadline - time.monotonic()
            self.timed_out = "case" if left < timeout else "cell"
            return max(1, math.ceil(min(timeout, left)))

        client = NotebookClient(
            notebook,
            timeout=timeout,
            timeout_func=cell_limit,
            kernel_name="python3",
            km=self.km,
            allow_errors=False,
            record_timing=False,
        )
        client.kc = self.kc
        client.reset_execution_trackers()
        notebook.metadata["language_info"] = self.language_info
        for index, cell in enumerate(notebook.cells):
            self.running = index
            await client.async_execute_cell(cell, index, execution_count=client.code_cells_executed + 1)
        self.running = None
        self.timed_out = ""
        client.set_widgets_metadata()
        self.healthy = True

    def last_words(self) -> str:
        self.log.flush()
        text = (self.folder / "kernel.log").read_text(encoding="utf-8", errors="replace").strip()
        return text.splitlines()[-1].strip() if text else "no message"

    async def aclose(self) -> None:
        """Kill the kernel (what it wrote is written: its replies came) and free its sockets and files."""
        if self.km is not None:
            with contextlib.suppress(Exception):  # closing must not hide the build's own outcome
                if self.kc is not None:
                    self.kc.stop_channels()
                await self.km.shutdown_kernel(now=True)
        self.close()

    def close(self) -> None:
        """:meth:`aclose` without an event loop (at exit): kill the process, remove the files."""
        self.healthy = False
        try:
            if self.kc is not None:
                self.kc.stop_channels()
                if getattr(self.kc, "_created_context", False) and not self.kc.context.closed:
                    self.kc.context.destroy(linger=0)
            process = getattr(getattr(self.km, "provisioner", None), "process", None)
            if process is not None and process.poll() is None:
                process.kill()
                process.wait(timeout=10)
            if self.km is not None:
                self.km.cleanup_connection_file()
                if getattr(self.km, "_created_context", False):
                    self.km.context.destroy(linger=0)
        except Exception:  # noqa: S110 (closing must not hide the build's own outcome)
            pass
        finally:
            self.kc = self.km = None
            if not self.log.closed:
                self.log.close()
            shutil.rmtree(self.folder, ignore_errors=True)


@contextlib.contextmanager
def _quiet_clients():
    with warnings.catch_warnings():
        # the Jupyter client libraries warn about their own internals (event loops,
        # sockets closed at exit, dates without time zones); none of it concerns the sheet
        for category in (DeprecationWarning, ResourceWarning, RuntimeWarning, UserWarning):
            warnings.filterwarnings(
                "ignore", category=category, module=r"(jupyter_client|jupyter_core|nbclient|zmq|traitlets)"
            )
        warnings.filterwarnings("ignore", category=ResourceWarning)
        yield


_LOCAL = threading.local()
_KEPT: list[Kernel] = []  # kernels kept by batch workers, killed when the process exits


@atexit.register
def _close_kept() -> None:
    while _KEPT:
        _KEPT.pop().close()


def _loop() -> asyncio.AbstractEventLoop:
    """This thread's event loop, kept for the thread's life (a kept kernel's sockets live on it)."""
    loop = getattr(_LOCAL, "loop", None)
    if loop is None or loop.is_closed():
        loop = _LOCAL.loop = asyncio.new_event_loop()
    return loop


def loop_running() -> bool:
    """Whether an event loop runs in this thread (in Jupyter it does)."""
    try:
        asyncio.get_running_loop()
    except RuntimeError:
        return False
    return True


def run_sync(make: Callable[[], Any]) -> Any:
    """Run the coroutine ``make()`` to its end, also from a thread where an event loop runs (Jupyter)."""
    if not loop_running():
        with _quiet_clients():
            loop = _loop()
            task = loop.create_task(make())
            try:
                return loop.run_until_complete(task)
            except BaseException:  # Ctrl-C while the loop waited: let the job unwind (kill its kernel)
                if not task.done():
                    task.cancel()
                    with contextlib.suppress(BaseException):
                        loop.run_until_complete(task)
                _cancel_left(loop)
                raise

    def run_apart() -> Any:  # a notebook's own loop runs here: run ours in a thread, then close it
        loop = asyncio.new_event_loop()
        try:
            with _quiet_clients():
                return loop.run_until_complete(make())
        finally:
            loop.close()

    with cf.ThreadPoolExecutor(1) as pool:
        return pool.submit(run_apart).result()


def _cancel_left(loop: asyncio.AbstractEventLoop) -> None:
    """Cancel the tasks an interrupted job left on *loop* (nbclient's pollers), and let them end."""
    left = [task for task in asyncio.all_tasks(loop) if not task.done()]
    for task in left:
        task.cancel()
    if left:
        with contextlib.suppress(BaseException):
            loop.run_until_complete(asyncio.gather(*left, return_exceptions=True))


async def start_kernel() -> Kernel:
    """A new :class:`Kernel`, its process launched (not yet warmed up: see :meth:`Kernel.warm_up`)."""
    kernel = Kernel()
    try:
        await kernel.start()
    except BaseException:
        await kernel.aclose()
        raise
    return kernel


async def run_in_kept_kernel(job: Callable[[Kernel], Awaitable[_T]], *, once: bool = False) -> _T:
    """Run ``job(kernel)`` in this thread's kept kernel: started and warmed up the first time, then kept.

    The job resets the kernel before its case (a build does). A kernel that the
    reset cannot bring back to its warmed-up state (:class:`ResetError`), that
    timed out, died or failed in a way other than a cell's error (it is then not
    :attr:`Kernel.healthy`), is killed and replaced by a new one; a case whose
    reset failed runs once more, in the new kernel. With *once* no kernel is
    kept: one is started, used and killed (for a thread whose event loop is not
    its own).
    """
    if once:
        kernel = await start_kernel()
        try:
            await kernel.warm_up()
            return await job(kernel)
        finally:
            await kernel.aclose()
    kernel = getattr(_LOCAL, "kernel", None)
    for attempt in (1, 2):
        if kernel is None or not kernel.healthy:
            if kernel is not None:
                await _forget(kernel)
            kernel = await start_kernel()
            _LOCAL.kernel = kernel
            _KEPT.append(kernel)
            await kernel.warm_up()
        try:
            return await job(kernel)
        except ResetError:
            kernel.healthy = False
            if attempt == 2 or kernel.cases == 0:  # a new kernel that cannot be reset: give up
                raise
            # an earlier case changed what a reset cannot undo: the case runs in a new kernel
        finally:
            if not kernel.healthy:
                await _forget(kernel)
                _LOCAL.kernel = None
    raise AssertionError("unreachable")


async def _forget(kernel: Kernel) -> None:
    if kernel in _KEPT:
        _KEPT.remove(kernel)
    await kernel.aclose()
