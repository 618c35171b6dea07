"""The worker processes that run plugin code, and the supervisor that hands them layouts.

A plugin is code a repository asks benchcheck to run; it can do anything Python can:
``sys.exit(0)``, ``os._exit``, loop forever, print.  None of that may turn a failing bench
into a pass.  So the commands never import a plugin in their own process: every plugin
import, every call of its hook and every rule run on a layout happens in a worker process
that this module watches.  A worker reports each plugin step before it starts it; when the
worker dies in one, or a step outlasts the timeout (the worker is then killed), the
supervisor names the plugin and the rule, leaves that plugin or rule out of the rest of
the run, and checks the layout again in a fresh worker, so the other rules' findings are
kept.  The run then ends with status 2.  A worker's standard output goes to standard
error, so a plugin's prints cannot corrupt JSON or SARIF output.

Where no plugin code can run (the configurations that apply list no ``plugins`` and no
entry point of the group is installed, or ``BENCHCHECK_NO_ENTRY_POINTS`` is set), there is
nothing to watch: one layout, or several with one job, is then checked in this process,
by the same code and with the same results, messages and exit status, without the
start of a worker (pre-commit checks one file at a time).  The configuration read to
decide is the one the check uses, and the in-process check loads no entry points and
stops before importing a plugin, so a file that changes meanwhile cannot slip plugin
code into this process: the run then goes to workers as any other.
"""

from __future__ import annotations

import collections
import dataclasses
import os
import sys
import time
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from .findings import Rule

#: attempts at one layout before giving up (each attempt leaves out one more plugin or rule)
MAX_ATTEMPTS = 25


@dataclass
class Job:
    """One layout to check (``path``), or only the rules of a configuration (``path`` None)."""

    path: str | None
    #: the configuration named with --config; None: found from the layout (or ``start``)
    config: str | None = None
    start: str | None = None
    keep_bench: bool = False
    #: plugins and rules left out because they ended or hung a worker
    exclude: tuple[str, ...] = ()
    skip: frozenset = frozenset()
    attempts: int = 0
    #: the configuration that applies, as the supervisor found it (what is left out is per configuration)
    key: str | None = None
    #: what the supervisor found out about this layout on earlier attempts
    errors: list[str] = field(default_factory=list)
    #: the layout's text where it is no file of the working tree (a git revision for
    #: ``diff``); ``path`` then names it, and ``start`` is where its configuration is found
    data: str | bytes | None = None


@dataclass
class Outcome:
    """What the supervisor hands back: the layouts' results (in the order given), every
    rule known from any configuration (plain metadata, no plugin code), and the problems
    of the rules job."""

    results: list = field(default_factory=list)
    rules: dict[str, tuple[Rule, str]] = field(default_factory=dict)
    errors: list[str] = field(default_factory=list)


def _not_here(bench, options):   # the check of a rule described to the supervisor
    raise RuntimeError("rule metadata only: the rule runs in a worker process")


def _plain_value(x: Any, depth: int = 0) -> Any:
    """An option default as plain data that unpickles without the plugin's modules."""
    if x is None or type(x) in (bool, int, float, str):
        return x
    if depth < 8 and type(x) in (list, tuple):
        return type(x)(_plain_value(v, depth + 1) for v in x)
    if depth < 8 and type(x) is dict:
        return {str(k): _plain_value(v, depth + 1) for k, v in x.items()}
    try:
        return repr(x)
    except BaseException:  # noqa: BLE001
        return type(x).__name__


def describe_rules(rules: dict) -> dict[str, tuple[Rule, str]]:
    """Rules as base-class records without their code: for listing and reports in the
    supervisor, which never imports a plugin."""
    from .plugins import plain_rule

    out = {}
    for rid, (rule, plugin) in rules.items():
        plain = plain_rule(rule, _not_here)
        options = tuple(dataclasses.replace(o, default=_plain_value(o.default)) for o in plain.options)
        out[rid] = (dataclasses.replace(plain, options=options), plugin)
    return out


# --- the worker -------------------------------------------------------------------------

def _worker(conn) -> None:
    """Run jobs until told to stop.  Ctrl-C is the supervisor's to handle."""
    import signal

    signal.signal(signal.SIGINT, signal.SIG_IGN)
    try:
        sys.stdout.flush()
    except Exception:  # noqa: BLE001
        pass
    try:
        os.dup2(2, 1)
    except OSError:
        pass
    sys.stdout = sys.stderr
    cache: dict = {}
    while True:
        try:
            job = conn.recv()
        except (EOFError, OSError):
            return
        if job is None:
            return
        result = _answer(job, conn, cache)
        try:
            conn.send(("done", result))
        except (OSError, EOFError):
            return
        except Exception as exc:  # noqa: BLE001 - something in the result does not pickle
            from .plugins import describe

            result.bench, result.findings = None, []
            result.errors.append(f"{result.file}: internal error: the result cannot be handed over "
                                 f"({describe(exc)}); please report it with this layout")
            conn.send(("done", result))


class _PluginCode(Exception):
    """An in-process check met a configuration that lists plugins: workers must run it."""


def _answer(job: Job, conn, cache: dict, here: bool = False):
    """The result of one job; whatever goes wrong is a sentence, never a traceback.  In a
    worker that includes what plugin code raises (``SystemExit`` and ``KeyboardInterrupt``
    too); in this process (``here``) only built-in code runs and Ctrl-C stays Ctrl-C."""
    try:
        return _run(job, conn, cache, here)
    except _PluginCode:
        raise
    except BaseException as exc:  # noqa: BLE001 - a sentence for the user, never a traceback
        if here and not isinstance(exc, Exception):
            raise
        from .engine import FileResult
        from .plugins import describe

        file = job.path or "<rules>"
        return FileResult(file, errors=[f"{file}: internal error while checking ({describe(exc)}); "
                                        "please report it with this layout"])


def _config_path(job: Job, cache: dict) -> Path | None:
    """The configuration that applies to ``job``: the one named with --config, else the
    one found from its layout, searched once per folder in a run (1,000 layouts of one
    folder share it)."""
    from .config import find_config

    if job.config:
        return Path(job.config)
    folder = _start_folder(job)
    found = cache.setdefault("found", {})
    if folder not in found:
        found[folder] = find_config(_start(job))
    return found[folder]


def _config(cfg_path: Path | None, cache: dict, exclude: tuple[str, ...] = ()):
    """The configuration at ``cfg_path``, read once for each set of plugins left out."""
    from .config import load_config

    configs = cache.setdefault("configs", {})
    key = (str(cfg_path), exclude)
    if key not in configs:
        configs[key] = load_config(cfg_path)
    return configs[key]


def _run(job: Job, conn, cache: dict, here: bool = False):
    from .engine import FileResult, check_file, check_text, config_folder
    from .model import LayoutError
    from .plugins import BUILTIN, load_rules

    name = job.path or "<rules>"
    try:
        cfg_path = _config_path(job, cache)
        key = (str(cfg_path), job.exclude)
        if key not in cache:
            config = _config(cfg_path, cache, job.exclude)
            if here and config.plugins:
                raise _PluginCode(str(cfg_path))

            def step(what, plugin):
                conn.send(("step", what, plugin, None, config.rule_timeout_s))

            # in this process: no entry point is installed, or they are turned off
            ruleset = load_rules(config.plugins, entry_points=False if here else None,
                                 search_path=config_folder(config), exclude=job.exclude,
                                 where=config.plugins_loc, progress=step)
            conn.send(("step", "solve", None, None, None))
            conn.send(("rules", describe_rules(ruleset.rules)))
            cache[key] = (config, ruleset)
        config, ruleset = cache[key]
    except LayoutError as exc:
        return FileResult(name, errors=[str(exc)])
    if job.path is None:
        return FileResult(name, errors=list(ruleset.errors))

    def progress(rule_id):
        plugin = ruleset.rules[rule_id][1]
        if plugin != BUILTIN:
            conn.send(("step", "rule", plugin, rule_id, config.rule_timeout_s))

    conn.send(("step", "solve", None, None, None))
    if job.data is not None:
        result = check_text(job.data, job.path, config, ruleset, skip=job.skip, progress=progress)
    else:
        result = check_file(Path(job.path), config, ruleset, skip=job.skip, progress=progress)
    if not job.keep_bench:
        result.bench = None   # the findings are enough: do not ship the bench between processes
    return result


# --- the supervisor ---------------------------------------------------------------------

class _Worker:
    def __init__(self, ctx):
        self.conn, child = ctx.Pipe()
        self.proc = ctx.Process(target=_worker, args=(child,), daemon=True)
        self.proc.start()
        child.close()
        self.job: Job | None = None
        self.index = -1
        self.step: tuple | None = None
        self.since = 0.0

    def stop(self, kill: bool = False) -> None:
        if kill:
            self.proc.kill()
        else:
            try:
                self.conn.send(None)
            except OSError:
                pass
        self.proc.join(timeout=5)
        if self.proc.is_alive():
            self.proc.kill()
            self.proc.join()
        self.conn.close()


def run_jobs(jobs: list[Job], n: int, timeout_s: float | None = None) -> Outcome:
    """Check every job in up to ``n`` worker processes; results in the order of ``jobs``.
    ``timeout_s`` overrides each configuration's ``rule_timeout_s``.  Without plugin code
    to watch, one job, or several with ``n`` 1, run in this process (module docstring)."""
    if len(jobs) == 1 or n == 1:
        cache: dict = {}
        if _plugin_free(jobs, cache):
            try:
                return _run_here(jobs, cache)
            except _PluginCode:
                pass        # a configuration changed since it was read: its plugins run in workers
    return _run_workers(jobs, n, timeout_s)


def _plugin_free(jobs: list[Job], cache: dict) -> bool:
    """No configuration of these jobs lists a plugin, and no entry point is installed (or
    they are turned off).  A configuration that cannot be read is left for the check to
    report (it then loads no plugin)."""
    from .plugins import entry_points_installed, entry_points_wanted

    for job in jobs:
        try:
            config = _config(_config_path(job, cache), cache)
        except Exception:  # noqa: BLE001 - the same failure is reported by the check itself
            continue
        if config.plugins:
            return False
    return not (entry_points_wanted() and entry_points_installed())


class _Here:
    """Takes what ``_run`` would send the supervisor from a worker: the rules' metadata
    (the steps only matter where plugin code runs)."""

    def __init__(self, out: Outcome):
        self.out = out

    def send(self, msg: tuple) -> None:
        if msg[0] == "rules":
            self.out.rules.update(msg[1])


def _run_here(jobs: list[Job], cache: dict) -> Outcome:
    """The jobs one after the other in this process.  What the check prints goes to standard
    error, as a worker's does: standard output holds the report alone."""
    import contextlib

    out = Outcome(results=[None] * len(jobs))
    conn = _Here(out)
    with contextlib.redirect_stdout(sys.stderr):
        for index, job in enumerate(jobs):
            result = _answer(job, conn, cache, here=True)
            result.errors = job.errors + result.errors
            if job.path is None:
                out.errors = result.errors
            out.results[index] = result
    return out


def _run_workers(jobs: list[Job], n: int, timeout_s: float | None) -> Outcome:
    import multiprocessing
    from multiprocessing.connection import wait

    from .engine import FileResult

    ctx = multiprocessing.get_context()
    out = Outcome(results=[None] * len(jobs))
    pending = collections.deque(enumerate(jobs))
    found: dict[str, str] = {}
    for job in jobs:
        job.key = _config_key(job, found)
    #: per configuration of a job: what is left out for every later layout
    left_out: dict[str | None, tuple[tuple[str, ...], frozenset]] = {}
    workers: list[_Worker] = []
    try:
        while pending or any(w.job for w in workers):
            while pending and (len(workers) < n or any(w.job is None for w in workers)):
                idle = next((w for w in workers if w.job is None), None)
                if idle is None:
                    idle = _Worker(ctx)
                    workers.append(idle)
                index, job = pending.popleft()
                exclude, skip = left_out.get(job.key, ((), frozenset()))
                job.exclude, job.skip = tuple(dict.fromkeys(job.exclude + exclude)), job.skip | skip
                idle.job, idle.index, idle.step, idle.since = job, index, None, time.monotonic()
                try:
                    idle.conn.send(job)
                except OSError:          # it died while idle: another one takes the job
                    idle.job = None
                    idle.stop(kill=True)
                    workers.remove(idle)
                    pending.appendleft((index, job))
            busy = [w for w in workers if w.job is not None]
            wait([w.conn for w in busy] + [w.proc.sentinel for w in busy], timeout=_next_deadline(busy, timeout_s))
            for w in busy:
                _drain(w, out, FileResult, pending, left_out, timeout_s)
            workers = [w for w in workers if w.proc.is_alive() or w.job is not None]
    finally:
        for w in workers:
            w.stop(kill=w.job is not None)   # busy only when interrupted: do not wait for it
    return out


def _config_key(job: Job, found: dict) -> str | None:
    """The configuration a job's layout is checked with (found without importing anything);
    its folder where the search fails (the worker reports why)."""
    from .config import find_config
    from .model import LayoutError

    if job.config:
        return job.config
    folder = str(_start_folder(job))
    if folder not in found:
        try:
            found[folder] = str(find_config(_start(job)))
        except (LayoutError, OSError):
            found[folder] = folder
    return found[folder]


def _start(job: Job) -> Path:
    """Where a job's configuration is searched from: its layout, or ``start``."""
    return Path(job.start or job.path or ".")


def _start_folder(job: Job) -> Path:
    """The folder ``find_config(_start(job))`` begins in (a link's target's folder; the
    parent of a path that does not exist): the key its answer is remembered by."""
    folder = _start(job).resolve()
    if folder.is_file() or not folder.exists():
        folder = folder.parent
    return folder


def _limit(w: _Worker, timeout_s: float | None) -> float | None:
    if not w.step or w.step[0] == "solve":
        return None
    return timeout_s if timeout_s is not None else w.step[3]


def _next_deadline(busy: list[_Worker], timeout_s: float | None) -> float | None:
    left = [w.since + _limit(w, timeout_s) - time.monotonic() for w in busy if _limit(w, timeout_s) is not None]
    return max(0.0, min(left)) if left else None


def _read(w: _Worker, out: Outcome) -> bool:
    """Take in everything worker ``w`` has sent so far; True once its job is done."""
    while True:
        try:
            if not w.conn.poll():
                return False
            msg = w.conn.recv()
        except (EOFError, OSError):
            return False
        if msg[0] == "step":
            w.step, w.since = (msg[1], msg[2], msg[3], msg[4]), time.monotonic()
        elif msg[0] == "rules":
            out.rules.update(msg[1])
        elif msg[0] == "done":
            result = msg[1]
            result.errors = w.job.errors + result.errors
            if w.job.path is None:
                out.errors = result.errors
            out.results[w.index] = result
            w.job, w.step = None, None
            return True


def _drain(w: _Worker, out: Outcome, FileResult, pending, left_out, timeout_s) -> None:
    """Read what worker ``w`` sent; handle its death or a step past its time.  Whether it
    is alive is asked before reading: a dead worker's last words are all in the pipe."""
    alive = w.proc.is_alive()
    if _read(w, out):
        return
    limit = _limit(w, timeout_s)
    hung = limit is not None and time.monotonic() - w.since >= limit
    if alive and not hung:
        return
    if hung:
        w.proc.kill()
    w.proc.join()
    if _read(w, out):     # it finished just before it was stopped
        return
    code = w.proc.exitcode
    job, step = w.job, w.step
    w.job = None
    w.conn.close()
    file = job.path or "<rules>"
    how = (f"did not finish within {limit:g} s and was stopped (rule_timeout_s in the configuration, "
           "or --rule-timeout)") if hung else f"ended the worker process (os._exit or a crash; exit status {code})"
    key = job.key
    exclude, skip = left_out.get(key, ((), frozenset()))
    if step and step[0] in ("import", "hook") and job.attempts < MAX_ATTEMPTS:
        what = "while being imported" if step[0] == "import" else "in its benchcheck_rules hook"
        job.errors.append(f"error: plugin {step[1]} {how} {what}; it is left out of this run")
        left_out[key] = (exclude + (step[1],), skip)
        job.exclude = job.exclude + (step[1],)
    elif step and step[0] == "rule" and job.attempts < MAX_ATTEMPTS:
        job.errors.append(f"{file}: rule '{step[2]}' from plugin {step[1]} {how}; it is left out of this run")
        left_out[key] = (exclude, skip | {step[2]})
        job.skip = job.skip | {step[2]}
    else:
        result = FileResult(file, errors=job.errors + [
            f"{file}: internal error: the worker process checking it ended (exit status {code}); "
            "please report it with this layout"])
        if job.path is None:
            out.errors = result.errors
        out.results[w.index] = result
        return
    job.attempts += 1
    pending.appendleft((w.index, job))
