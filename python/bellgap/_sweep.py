"""Sweeps: one bellgap function mapped over many games or parameter sets, on any
``concurrent.futures.Executor`` (a ``ThreadPoolExecutor``, a ``ProcessPoolExecutor``, or a
Dask distributed ``Client``'s ``get_executor()`` on a cluster).

Each task runs independently; a task that fails gives a row with ``ok = False`` and the error
(kind, message, location) instead of stopping the sweep. Rows come back in the order of the
tasks whatever the executor.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Callable, Dict, Iterable, List, Optional, Sequence, Union


@dataclass(frozen=True)
class Task:
    """One call: ``function`` (a bellgap function's name, e.g. ``"npa"``), the ``game``
    (a Game, path, YAML text or dict), its keyword arguments, and ``label``: extra columns
    for the row (e.g. the parameter being swept)."""

    function: str
    game: Any
    kwargs: Dict[str, Any] = field(default_factory=dict)
    label: Dict[str, Any] = field(default_factory=dict)


GAME_FUNCTIONS = (
    "check", "classical", "nosignal", "bounds", "npa", "seesaw", "evaluate", "margin",
    "randomness", "entropy", "finite_size",
)
"""The bellgap functions whose first argument is a game: what a sweep maps."""


def _name(function: Union[str, Callable]) -> str:
    name = function if isinstance(function, str) else getattr(function, "__name__", "")
    if name not in GAME_FUNCTIONS:
        raise ValueError(
            f"not a bellgap function of a game: {function!r} (one of {', '.join(GAME_FUNCTIONS)})"
        )
    return name


def run_task(task: Task) -> Dict[str, Any]:
    """Runs one task and returns its row (importable by workers: a module-level function)."""
    import bellgap

    row: Dict[str, Any] = dict(task.label)
    try:
        game = bellgap.load(task.game)
        row["game"] = game.name
        result = getattr(bellgap, task.function)(game, **task.kwargs).to_dict()
        row["ok"] = True
        for k, v in result.items():
            if isinstance(v, (int, float, str, bool)) or v is None:
                row.setdefault(k, v)
        row["result"] = result
    except bellgap.BellgapError as err:
        row["ok"] = False
        row["error"] = err.to_dict()["error"]
    return row


def sweep(
    function: Union[str, Callable],
    items: Iterable[Any],
    params: Optional[Union[Dict[str, Any], Sequence[Dict[str, Any]]]] = None,
    executor: Any = None,
    as_frame: Optional[bool] = None,
):
    """Maps ``function`` over ``items``.

    ``items`` are games (Game, path, YAML text or dict) or :class:`Task` objects. ``params``
    is one dict of keyword arguments for every game, or a list of dicts, one per game
    (its entries also become columns). ``executor`` is any ``concurrent.futures.Executor``
    (None: run here, one after another). Returns the rows: a pandas DataFrame when pandas is
    installed and ``as_frame`` is not False, else a list of dicts. Each row has the task's
    label columns, ``game``, ``ok``, the result's top-level numbers and strings (e.g.
    ``verified_upper``), and ``result``: the whole ``--json`` object (or ``error``)."""
    name = _name(function)
    items = list(items)
    if params is None:
        per_item: List[Dict[str, Any]] = [{} for _ in items]
    elif isinstance(params, dict):
        per_item = [dict(params) for _ in items]
    else:
        per_item = [dict(p) for p in params]
        if len(per_item) != len(items):
            raise ValueError(f"{len(per_item)} parameter sets for {len(items)} games")
    tasks = []
    for item, kwargs in zip(items, per_item):
        if isinstance(item, Task):
            tasks.append(item)
        else:
            label = {k: v for k, v in kwargs.items() if isinstance(v, (int, float, str, bool))}
            tasks.append(Task(name, item, kwargs, label))
    if executor is None:
        rows = [run_task(t) for t in tasks]
    else:
        rows = list(executor.map(run_task, tasks))
    if as_frame is False:
        return rows
    try:
        import pandas as pd
    except ImportError:
        if as_frame:
            raise
        return rows
    return pd.DataFrame(rows)
