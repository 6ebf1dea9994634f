"""Memory of a process and its workers, for the benchmarks."""
from __future__ import annotations


class TreeMemory:
    """Peak proportional set size (PSS) of this process and all its descendants, sampled every ``every`` s.

    PSS shares each page among the processes that map it, so forked workers that share the parent's
    pages are not counted twice (Linux /proc/<pid>/smaps_rollup; 0 where it cannot be read)."""

    def __init__(self, every: float = 0.2):
        import os
        import threading

        self.peak_mb = 0.0
        self._every = every
        self._stop = threading.Event()
        self._root = os.getpid()
        self._thread = threading.Thread(target=self._run, daemon=True)

    def _tree(self) -> list[int]:
        import os

        parent = {}
        for name in os.listdir("/proc"):
            if name.isdigit():
                try:
                    with open(f"/proc/{name}/stat") as fh:
                        parent[int(name)] = int(fh.read().rsplit(")", 1)[1].split()[1])
                except (OSError, ValueError, IndexError):
                    pass
        tree, todo = [], [self._root]
        while todo:
            pid = todo.pop()
            tree.append(pid)
            todo += [c for c, pp in parent.items() if pp == pid]
        return tree

    @staticmethod
    def _pss_kb(pid: int) -> int:
        try:
            with open(f"/proc/{pid}/smaps_rollup") as fh:
                for line in fh:
                    if line.startswith("Pss:"):
                        return int(line.split()[1])
        except OSError:
            pass
        return 0

    def _run(self):
        while not self._stop.is_set():
            self.peak_mb = max(self.peak_mb, sum(self._pss_kb(p) for p in self._tree()) / 1024.0)
            self._stop.wait(self._every)

    def __enter__(self):
        self._thread.start()
        return self

    def __exit__(self, *exc):
        self._stop.set()
        self._thread.join()
