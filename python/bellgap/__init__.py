"""bellgap from Python: trustworthy bounds for nonlocal games and Bell expressions.

Load a game (a file, YAML text, a dict in the game-file schema, or a standard family), then
call one function per bound or figure. Every result is a :class:`Result` whose ``to_dict()``
is exactly the JSON object ``bellgap COMMAND --json`` prints; errors are :class:`BellgapError`
subclasses carrying the same kind, message and location (file, line, column, field).

Computations run in Rust with the GIL released and stop waiting on Ctrl-C
(``KeyboardInterrupt``). :func:`sweep` maps a bound over many games or parameters on any
``concurrent.futures.Executor`` (a thread or process pool, or a Dask ``Client``'s executor).
"""

from __future__ import annotations

import copy
import html
import json
import os
from typing import Any, Dict, Iterable, List, Optional, Sequence, Union

import numpy as np

from . import _bellgap
from ._sweep import sweep, Task

__all__ = [
    "BellgapError",
    "InputError",
    "UsageError",
    "TooLargeError",
    "SolverError",
    "IoError",
    "InternalError",
    "Game",
    "Result",
    "Strategy",
    "load",
    "check",
    "classical",
    "nosignal",
    "bounds",
    "npa",
    "seesaw",
    "evaluate",
    "margin",
    "randomness",
    "entropy",
    "finite_size",
    "design",
    "self_test",
    "key",
    "local",
    "locality",
    "review",
    "sweep",
    "Task",
    "__version__",
]

__version__ = _bellgap.version()


class BellgapError(Exception):
    """An error reported by bellgap: ``kind`` (``input``, ``usage``, ``too_large``, ``solver``,
    ``io``, ``internal``), ``message``, and ``location`` (a dict with ``file``, ``line``,
    ``column``, ``field``, or None), as in the command line's JSON error object."""

    def __init__(self, kind: str, message: str, location: Optional[dict] = None):
        super().__init__(message)
        self.kind = kind
        self.message = message
        self.location = location

    @property
    def file(self) -> Optional[str]:
        return (self.location or {}).get("file")

    @property
    def line(self) -> Optional[int]:
        return (self.location or {}).get("line")

    @property
    def column(self) -> Optional[int]:
        return (self.location or {}).get("column")

    @property
    def field(self) -> Optional[str]:
        return (self.location or {}).get("field")

    def to_dict(self) -> dict:
        """The command line's JSON error object (without ``schema_version``)."""
        return {"error": {"kind": self.kind, "message": self.message, "location": self.location}}

    def __reduce__(self):
        return (type(self), (self.kind, self.message, self.location))


class InputError(BellgapError, ValueError):
    """A bad file or value (exit code 2 on the command line)."""


class UsageError(BellgapError, ValueError):
    """A bad option or argument (exit code 2)."""


class TooLargeError(BellgapError):
    """Work refused by its estimate; pass ``force=True`` to run anyway (exit code 2)."""


class SolverError(BellgapError, RuntimeError):
    """A solver failed or stopped without a bound it can stand behind."""


class IoError(BellgapError, OSError):
    """A file could not be read or written."""


class InternalError(BellgapError, RuntimeError):
    """A bug: please report it."""


_KINDS = {
    "input": InputError,
    "usage": UsageError,
    "too_large": TooLargeError,
    "solver": SolverError,
    "io": IoError,
    "internal": InternalError,
}


def _raise_from(err: _bellgap.BellgapError):
    kind, message, location = err.args
    location = json.loads(location) if location else None
    if kind == "too_large":
        # The library's hint names the command line's option; here it is a keyword.
        message = message.replace("pass --force", "pass force=True").replace("--force", "force=True")
    raise _KINDS.get(kind, BellgapError)(kind, message, location) from None


def _call(fn, *args):
    """Calls the extension; maps its errors to the typed exceptions; parses its reply."""
    try:
        reply = fn(*args)
    except _bellgap.BellgapError as err:
        _raise_from(err)
    return json.loads(reply)


class Result:
    """A command's result: ``to_dict()`` is the command line's ``--json`` object.

    Keys read as attributes or items (``r.verified_upper``, ``r["verified_upper"]``)."""

    def __init__(self, data: dict):
        self._data = data

    def to_dict(self) -> dict:
        return copy.deepcopy(self._data)

    def to_json(self, **kwargs) -> str:
        return json.dumps(self._data, **kwargs)

    def __getitem__(self, key: str) -> Any:
        return self._data[key]

    def __contains__(self, key: str) -> bool:
        return key in self._data

    def get(self, key: str, default: Any = None) -> Any:
        return self._data.get(key, default)

    def keys(self):
        return self._data.keys()

    def __getattr__(self, name: str) -> Any:
        data = self.__dict__.get("_data")
        if data is not None and name in data:
            return data[name]
        raise AttributeError(name)

    def __repr__(self) -> str:
        command = self._data.get("command", "result")
        shown = {k: v for k, v in self._data.items() if isinstance(v, (int, float, str, bool))}
        return f"<bellgap {command}: {shown}>"

    def _repr_html_(self) -> str:
        rows = []
        for k, v in self._data.items():
            if isinstance(v, (dict, list)):
                v = json.dumps(v)
                if len(v) > 200:
                    v = v[:200] + "…"
            rows.append(
                f"<tr><th style='text-align:left'>{html.escape(str(k))}</th>"
                f"<td style='text-align:left'>{html.escape(str(v))}</td></tr>"
            )
        title = html.escape(str(self._data.get("command", "result")))
        return f"<table><caption>bellgap {title}</caption>{''.join(rows)}</table>"

    def __reduce__(self):
        return (type(self), (self._data,))


_COMMANDS = [
    "check", "classical", "nosignal", "bounds", "npa", "seesaw", "evaluate", "local", "margin",
    "randomness", "entropy", "finite-size", "key", "review", "design", "self-test",
]
RESULT_TYPES: Dict[str, type] = {}
for _command in _COMMANDS:
    _name = "".join(part.capitalize() for part in _command.split("-")) + "Result"
    _type = type(
        _name,
        (Result,),
        {
            "__doc__": f"The result of ``bellgap {_command}``: ``to_dict()`` is its ``--json`` "
            "object (keys listed in CHANGELOG.md).",
            "__module__": __name__,
            "__qualname__": _name,
        },
    )
    RESULT_TYPES[_command] = _type
    globals()[_name] = _type
    __all__.append(_name)
del _command, _name, _type


def _result(data: dict) -> Result:
    """The typed result of a command's JSON object (by its ``command`` key)."""
    return RESULT_TYPES.get(data.get("command"), Result)(data)


class Game:
    """A loaded and validated game. Picklable (it keeps its YAML text or family), so it can
    be sent to process pools and cluster workers."""

    def __init__(self, _inner, _recipe):
        self._inner = _inner
        self._recipe = _recipe

    @classmethod
    def from_file(cls, path: Union[str, os.PathLike]) -> "Game":
        """Reads a game file (errors name the file, line and column)."""
        path = os.fspath(path)
        text = _read_input(path)
        return cls(_call_game(_bellgap.load_yaml, text, path), ("yaml", text, path))

    @classmethod
    def from_yaml(cls, text: str, name: str = "<string>") -> "Game":
        """A game from YAML text in the game-file schema; errors name ``name``."""
        return cls(_call_game(_bellgap.load_yaml, text, name), ("yaml", text, name))

    @classmethod
    def from_dict(cls, spec: dict, name: str = "<dict>") -> "Game":
        """A game from a dict in the game-file schema (the same keys as the YAML file)."""
        text = _document_json(spec)
        return cls(_call_game(_bellgap.load_yaml, text, name), ("yaml", text, name))

    @classmethod
    def family(cls, name: str, **params) -> "Game":
        """A standard game: ``chsh``, ``chsh-expression``, ``xor`` (signs="1 1;1 -1"),
        ``odd-cycle`` (n), ``magic-square``, ``ghz`` (players), ``cglmp`` (d), ``i3322``,
        ``chained`` (m), ``mermin`` (players, default 3), ``svetlichny`` (players, default 3),
        ``chsh-mod`` (d), ``tilted-chsh`` (alpha, default 1; beta, default 0.5)."""
        inner = _call_game(_bellgap.family, name, _arguments(params))
        return cls(inner, ("family", name, params))

    @property
    def name(self) -> str:
        return self._inner.name

    @property
    def source(self) -> str:
        return self._inner.source

    @property
    def warnings(self) -> List[str]:
        return self._inner.warnings

    @property
    def players(self) -> List[tuple]:
        """(name, questions, answers) per player."""
        return self._inner.players

    def table(self) -> dict:
        """The flat table: ``weights`` w(q) per joint question, ``scores`` V(a|q) as a
        (joint questions × joint answers) array, ``offset``, ``questions`` and ``answers`` per
        player. The value of a behaviour p(a|q) is offset + Σ_q w(q) Σ_a V(a|q) p(a|q)."""
        weights, scores, offset, questions, answers = self._inner.table()
        weights = np.asarray(weights, dtype=float)
        return {
            "weights": weights,
            "scores": np.asarray(scores, dtype=float).reshape(len(weights), -1),
            "offset": offset,
            "questions": list(questions),
            "answers": list(answers),
        }

    def __repr__(self) -> str:
        return repr(self._inner)

    def __reduce__(self):
        return (_rebuild_game, (self._recipe,))


MAX_INPUT_BYTES = 64 << 20
"""The largest input file read, as in the library (``formats::files::MAX_INPUT_BYTES``)."""


def _read_input(path: str) -> str:
    """An input file's text, refused like the library refuses it: not a regular file (a device
    or a folder), larger than 64 MiB, or not UTF-8."""
    where = {"file": path, "line": None, "column": None, "field": None}
    try:
        info = os.stat(path)
    except OSError as e:
        raise IoError("io", f"cannot read {path}: {e.strerror}", where) from None
    import stat

    if not stat.S_ISREG(info.st_mode):
        raise IoError("io", f"cannot read {path}: not a regular file", where)
    if info.st_size > MAX_INPUT_BYTES:
        raise InputError(
            "input", f"{path} is {info.st_size} bytes, more than the 64 MiB an input may have", where
        )
    try:
        with open(path, "rb") as f:
            data = f.read(MAX_INPUT_BYTES + 1)
        return data.decode("utf-8")
    except UnicodeDecodeError:
        raise InputError("input", f"{path} is not UTF-8 text", where) from None
    except OSError as e:
        raise IoError("io", f"cannot read {path}: {e.strerror}", where) from None


def _call_game(fn, *args):
    try:
        return fn(*args)
    except _bellgap.BellgapError as err:
        _raise_from(err)


def _rebuild_game(recipe) -> Game:
    kind = recipe[0]
    if kind == "yaml":
        return Game.from_yaml(recipe[1], recipe[2])
    if kind == "family":
        return Game.family(recipe[1], **recipe[2])
    return Game.from_file(recipe[1])


GameLike = Union[Game, str, os.PathLike, dict]


def load(game: GameLike) -> Game:
    """A :class:`Game` from a Game, a path, YAML text (a string with a newline or a ``:``
    that is not an existing file), or a dict."""
    if isinstance(game, Game):
        return game
    if isinstance(game, dict):
        return Game.from_dict(game)
    if isinstance(game, os.PathLike):
        return Game.from_file(game)
    if isinstance(game, str):
        if os.path.exists(game) or ("\n" not in game and ":" not in game):
            return Game.from_file(game)
        return Game.from_yaml(game)
    raise TypeError(f"expected a Game, a path, YAML text or a dict, got {type(game).__name__}")


class Strategy:
    """A quantum strategy: a pure ``state`` (complex vector in the product basis, first player
    most significant) and ``measurements[player][question][answer]`` (complex POVM elements)."""

    def __init__(self, dims: Sequence[int], state, measurements):
        self.dims = [int(d) for d in dims]
        self.state = np.asarray(state, dtype=complex)
        self.measurements = [
            [[np.asarray(m, dtype=complex) for m in question] for question in player]
            for player in measurements
        ]

    @classmethod
    def _from_json(cls, data: dict) -> "Strategy":
        z = lambda pairs: np.asarray([complex(re, im) for re, im in pairs])
        return cls(
            data["dims"],
            z(data["state"]),
            [
                [[np.array([[complex(re, im) for re, im in row] for row in m]) for m in q] for q in p]
                for p in data["measurements"]
            ],
        )

    def _to_json(self) -> str:
        arrays = [("state", self.state)] + [
            (f"measurements.{p}", np.asarray(m)) for p, player in enumerate(self.measurements)
            for question in player for m in question
        ]
        for field, a in arrays:
            if not np.all(np.isfinite(a)):
                raise InputError(
                    "input",
                    f"strategy: {field} has a value that is not a finite number",
                    {"file": "<strategy>", "line": None, "column": None, "field": field},
                )
        pair = lambda z: [float(np.real(z)), float(np.imag(z))]
        return json.dumps(
            {
                "dims": self.dims,
                "state": [pair(z) for z in self.state.ravel()],
                "measurements": [
                    [[[[pair(z) for z in row] for row in np.asarray(m)] for m in q] for q in p]
                    for p in self.measurements
                ],
            }
        )

    def behaviour(self, questions: Sequence[int]) -> np.ndarray:
        """p(a|q) for one joint question (one question index per player), by the Born rule,
        as an array indexed by each player's answer."""
        psi = self.state.reshape(self.dims)
        shape = [len(self.measurements[p][q]) for p, q in enumerate(questions)]
        out = np.zeros(shape)
        for answers in np.ndindex(*shape):
            phi = psi
            for p, (q, a) in enumerate(zip(questions, answers)):
                phi = np.moveaxis(np.tensordot(self.measurements[p][q][a], phi, axes=([1], [p])), 0, p)
            out[answers] = float(np.real(np.vdot(psi, phi)))
        return out

    def value(self, game: Game) -> float:
        """The game's value of this strategy by the Born rule, in numpy (independent of the
        Rust evaluation)."""
        t = game.table()
        total = t["offset"]
        for qi, w in enumerate(t["weights"]):
            if w == 0:
                continue
            questions = np.unravel_index(qi, t["questions"])
            p = self.behaviour([int(q) for q in questions]).ravel()
            total += w * float(np.dot(t["scores"][qi], p))
        return total

    def __repr__(self) -> str:
        return f"Strategy(dims={self.dims})"


def _from_numpy(value: Any) -> Any:
    """NumPy scalars and arrays as Python numbers and lists; anything else as it is."""
    if isinstance(value, np.ndarray):
        return value.tolist()
    if isinstance(value, np.generic):
        return value.item()
    return value


def _plain(name: str, value: Any) -> Any:
    """A keyword argument as JSON-ready Python (NumPy scalars and arrays become numbers and
    lists); a non-finite number or an integer beyond 64 bits is a usage error naming it."""
    value = _from_numpy(value)
    if isinstance(value, bool) or value is None or isinstance(value, str):
        return value
    if isinstance(value, int):
        if not -(2**63) <= value < 2**64:
            raise UsageError("usage", f"{name} = {value} is out of range (a 64-bit integer)")
        return value
    if isinstance(value, float):
        if value != value or value in (float("inf"), float("-inf")):
            raise UsageError("usage", f"{name} must be a finite number, got {value}")
        return value
    if isinstance(value, (list, tuple)):
        return [_plain(name, v) for v in value]
    if isinstance(value, dict):
        return {k: _plain(f"{name}.{k}", v) for k, v in value.items()}
    raise UsageError("usage", f"{name}: expected a number, text or a list, got {type(value).__name__}")


def _arguments(kwargs: dict) -> str:
    """The keyword arguments as the extension's JSON."""
    return json.dumps({k: _plain(k, v) for k, v in kwargs.items()}, allow_nan=False)


def _game_command(command: str, game: GameLike, strategy: Optional[Strategy] = None, **kwargs) -> Result:
    g = load(game)
    args = [command, g._inner, _arguments(kwargs)]
    if strategy is not None:
        args.append(strategy._to_json())
    reply = _call(_bellgap.run_game, *args)
    result = _result(reply["result"])
    if command == "seesaw" and reply.get("extra"):
        result.__dict__["strategy"] = Strategy._from_json(reply["extra"])
    if command == "npa" and reply.get("extra") is not None:
        result.__dict__["certificate"] = reply["extra"]
    return result


def _figure_command(command: str, game: GameLike, **kwargs) -> Result:
    g = load(game)
    reply = _call(_bellgap.run_figure, command, g._inner, _arguments(kwargs))
    return _result(reply["result"])


def check(game: GameLike) -> Result:
    """Sizes, estimates and the symmetry group (``bellgap check``)."""
    return _game_command("check", game)


def classical(game: GameLike, method: str = "auto", force: bool = False) -> Result:
    """The exact classical value and an optimal deterministic strategy."""
    return _game_command("classical", game, method=method, force=force)


def nosignal(game: GameLike, force: bool = False) -> Result:
    """The no-signalling value."""
    return _game_command("nosignal", game, force=force)


def bounds(
    game: GameLike,
    level: Optional[str] = None,
    solver: str = "auto",
    symmetry: str = "auto",
    budget: Optional[float] = None,
    force: bool = False,
    dims: Optional[Sequence[int]] = None,
    restarts: int = 10,
    seed: int = 1,
    skip: Sequence[str] = (),
) -> Result:
    """Every bound and the gaps (``bellgap bounds``). ``budget`` is the whole call's wall-clock
    seconds; ``dims``, ``restarts`` and ``seed`` are the see-saw's (as :func:`seesaw`); ``skip``
    lists bounds not to compute (``classical``, ``no-signalling``, ``npa``, ``seesaw``)."""
    return _game_command(
        "bounds", game, level=level, solver=solver, symmetry=symmetry, budget=budget, force=force,
        dims=dims, restarts=restarts, seed=seed, skip=list(skip),
    )


def npa(
    game: GameLike,
    level: str = "1+joint",
    solver: str = "auto",
    symmetry: str = "auto",
    budget: Optional[float] = None,
    certificate: bool = False,
    force: bool = False,
) -> Result:
    """The verified NPA upper bound at ``level`` (several levels separated by ``;``). With
    ``certificate=True`` the result's ``certificate`` attribute is the certificate (the file
    ``bellgap npa --certificate`` writes, as a dict)."""
    return _game_command(
        "npa",
        game,
        level=level,
        solver=solver,
        symmetry=symmetry,
        budget=budget,
        certificate=certificate,
        force=force,
    )


def seesaw(
    game: GameLike,
    dims: Optional[Sequence[int]] = None,
    restarts: int = 10,
    seed: int = 1,
    force: bool = False,
) -> Result:
    """An explicit quantum strategy (a lower bound); the result's ``strategy`` attribute is a
    :class:`Strategy` with numpy arrays."""
    return _game_command(
        "seesaw",
        game,
        dims=list(dims) if dims is not None else None,
        restarts=restarts,
        seed=seed,
        force=force,
    )


def evaluate(game: GameLike, strategy: Strategy, no_classical: bool = False, force: bool = False) -> Result:
    """A strategy's value by the Born rule, checked, with its analysis."""
    return _game_command("evaluate", game, strategy=strategy, no_classical=no_classical, force=force)


def margin(
    game: GameLike,
    rounds: Optional[int] = None,
    wins: Optional[int] = None,
    score_sum: Optional[float] = None,
    score_range: Optional[Sequence[float]] = None,
    alpha: Optional[float] = None,
    target_p_value: Optional[float] = None,
    expected: Optional[float] = None,
    force: bool = False,
    counts=None,
) -> Result:
    """What an observed run certifies against the classical value: ``rounds`` with ``wins`` or
    ``score_sum``, or ``counts`` (a counts file's path, its YAML text, or a dict in the same
    schema), whose per-round estimator the result states."""
    extra = {}
    if counts is not None:
        extra["counts_text"], extra["counts_name"] = _text_and_name(counts)
    return _figure_command(
        "margin",
        game,
        **extra,
        rounds=rounds,
        wins=wins,
        score_sum=score_sum,
        score_range=list(score_range) if score_range is not None else None,
        alpha=alpha,
        target_p_value=target_p_value,
        expected=expected,
        force=force,
    )


def randomness(game: GameLike, score=None, scores=None, player=None, question=None,
               with_player=None, with_question=None, level: str = "2", counts=None,
               alpha=None, exact: bool = False, force: bool = False) -> Result:
    """Certified min-entropy from the guessing probability at a score (or a list of scores),
    or at the lower confidence score of ``counts`` (a counts file's path, its YAML text or a
    dict) with error ``alpha`` (default 1e-6). With ``exact=True`` each bound is also proven
    in exact rational arithmetic (the result's ``exact``: the fraction, the bound rounded up
    and the min-entropy rounded down)."""
    extra = {}
    if counts is not None:
        extra["counts_text"], extra["counts_name"] = _text_and_name(counts)
        extra["alpha"] = alpha
    return _figure_command(
        "randomness", game, **extra, score=score, scores=scores, player=player, question=question,
        with_player=with_player, with_question=with_question, level=level, exact=exact,
        force=force,
    )


def entropy(game: GameLike, score=None, scores=None, player=None, question=None,
            with_player=None, with_question=None, nodes=None, level=None,
            adversary_words=None, moments=None, solver=None, error_rate=None,
            noisy_preprocessing=None, behaviour=None, strategy: Optional[Strategy] = None,
            key_with=None, key_question=None, counts=None, alpha=None,
            symmetry: str = "auto", force: bool = False) -> Result:
    """A verified lower bound on H(A|X=x, E) by the Gauss–Radau hierarchy (``bellgap entropy``).

    Given ``score`` (or ``scores``), the bound holds for every quantum behaviour scoring at least
    that; given ``behaviour`` (a correlations file's path, its YAML text, or a dict in the same
    schema) or ``strategy`` (a :class:`Strategy`, e.g. ``seesaw(game).strategy``), for that
    behaviour. The Devetak–Winter key rate comes with ``error_rate`` (Fano's bound) or with
    ``key_with`` (the other player of the key pair, and ``key_question``, from the behaviour).
    ``noisy_preprocessing`` is the probability with which the key player changes its answer
    first. Given ``counts`` (a counts file's path, its YAML text or a dict), for every quantum
    behaviour in their confidence region of error ``alpha`` (default 1e-6). ``symmetry="off"``
    solves the relaxations in full (by default a score's are reduced by the game's relabellings
    that keep the key player and question; the bound is checked on the full relaxations)."""
    kwargs = dict(
        score=score, scores=scores, player=player, question=question,
        with_player=with_player, with_question=with_question, nodes=nodes, level=level,
        adversary_words=adversary_words, moments=moments, solver=solver, error_rate=error_rate,
        noisy_preprocessing=noisy_preprocessing, key_with=key_with, key_question=key_question,
        entropy_symmetry=symmetry, force=force,
    )
    if behaviour is not None:
        kwargs["behaviour_text"], kwargs["behaviour_name"] = _text_and_name(behaviour)
    if counts is not None:
        kwargs["counts_text"], kwargs["counts_name"] = _text_and_name(counts)
        kwargs["alpha"] = alpha
    g = load(game)
    args = ["entropy", g._inner, _arguments(kwargs)]
    if strategy is not None:
        args.append(strategy._to_json())
    return _result(_call(_bellgap.run_figure, *args)["result"])


def design(game: GameLike, figure: str = "margin", efficiency=None, visibility: float = 1.0,
           dark_counts: float = 0.0, no_click="best", state: str = "optimised",
           threshold: Optional[str] = None, tolerance: float = 1e-3, curve_points: int = 10,
           player=None, question=None, key_with=None, key_question=None,
           noisy_preprocessing=None, nodes=None, level=None, dims=None, restarts=None,
           seed=None, force: bool = False) -> Result:
    """The best honest implementation under noise for a figure (``bellgap design``).

    ``figure`` is ``margin`` (over the classical value), ``min-entropy``, ``entropy`` or
    ``key-rate`` (with ``key_with`` and ``key_question``, the other player's key question).
    The noise: ``visibility`` in [0, 1], ``efficiency`` in (0, 1] (one number, or one per
    player), ``dark_counts`` in [0, 1], and ``no_click`` (``"best"`` or an answer label every
    player reports for a round without a click). ``threshold`` (``"efficiency"`` or
    ``"visibility"``) searches for the least value at which the figure is positive. The
    result's ``strategy`` attribute is the implementation (state and measurements before noise)."""
    if isinstance(efficiency, (int, float)):
        efficiency = [efficiency]
    kwargs = dict(
        figure=figure, efficiency=list(efficiency) if efficiency is not None else None,
        visibility=visibility, dark_counts=dark_counts, no_click=no_click, state=state,
        threshold=threshold, tolerance=tolerance, curve_points=curve_points, player=player,
        question=question, key_with=key_with, key_question=key_question,
        noisy_preprocessing=noisy_preprocessing, nodes=nodes, level=level,
        dims=list(dims) if dims is not None else None, restarts=restarts, seed=seed, force=force,
    )
    g = load(game)
    reply = _call(_bellgap.run_design, "design", g._inner, _arguments(kwargs))
    result = _result(reply["result"])
    if reply.get("extra"):
        result.__dict__["strategy"] = Strategy._from_json(reply["extra"])
    return result


def self_test(game: GameLike, score: Optional[float] = None, target=None,
              strategy: Optional[Strategy] = None, questions=None, level=None, dims=None,
              restarts=None, seed=None, behaviour=None, counts=None, alpha=None) -> Result:
    """A verified lower bound on the fidelity of the devices' state, extracted by local SWAP
    isometries, with a target state (``bellgap self-test``; two players, two questions each):
    over every quantum behaviour scoring at least ``score``, or in the region of ``behaviour``
    or ``counts`` (a file's path, its YAML text or a dict; ``alpha`` the counts' error).
    ``target`` is four real amplitudes of |00>, |01>, |10>, |11>; by default the state the
    see-saw's best strategy extracts to, or that of ``strategy``. For games equivalent to CHSH,
    Kaniewski's analytic bound is beside it."""
    extra = {}
    if behaviour is not None:
        extra["behaviour_text"], extra["behaviour_name"] = _text_and_name(behaviour)
    if counts is not None:
        extra["counts_text"], extra["counts_name"] = _text_and_name(counts)
        extra["alpha"] = alpha
    kwargs = dict(
        **extra,
        score=score, target=list(target) if target is not None else None,
        questions=list(questions) if questions is not None else None, level=level,
        dims=list(dims) if dims is not None else None, restarts=restarts, seed=seed,
    )
    g = load(game)
    args = ["self-test", g._inner, _arguments(kwargs)]
    if strategy is not None:
        args.append(strategy._to_json())
    return _result(_call(_bellgap.run_design, *args)["result"])


def finite_size(game: GameLike, rounds: int, testing: float, threshold: float, **kwargs) -> Result:
    """What a spot-checking run certifies by entropy accumulation (``bellgap finite-size``);
    further options as keyword arguments: expected, player, question, smoothing, pass_floor,
    extractor_error, fraction, key_disclosed_bits or key_error_rate (with ec_efficiency),
    verification_error, correction_failure, max_test_rounds, statement ("smaller",
    "improved-second-order" or "original"), tangent, tangent_points, nodes, level,
    adversary_words, moments, solver, noisy_preprocessing."""
    return _figure_command("finite_size", game, rounds=rounds, testing=testing, threshold=threshold, **kwargs)


def key(chsh: float, qber: float, noisy_preprocessing: Optional[float] = None) -> Result:
    """CHSH-based DIQKD figures (analytic bound; with noisy preprocessing, the key bit flipped
    with that probability before error correction)."""
    flip = None if noisy_preprocessing is None else float(noisy_preprocessing)
    return _result(_call(_bellgap.key, float(chsh), float(qber), flip)["result"])


def local(correlations: Union[str, os.PathLike, dict], force: bool = False) -> Result:
    """Whether correlations have a local model (``bellgap local``): a correlations file's path,
    its YAML text, or a dict in the same schema."""
    text, name = _text_and_name(correlations)
    return _result(_call(_bellgap.locality, text, name, force)["result"])


def locality(correlations: Union[str, os.PathLike, dict], force: bool = False) -> Result:
    """The former name of :func:`local` (the command line's ``local``); kept so that existing
    notebooks run, with a deprecation warning."""
    import warnings

    warnings.warn("bellgap.locality is now bellgap.local", DeprecationWarning, stacklevel=2)
    return local(correlations, force=force)


def _document_json(document: dict) -> str:
    """A dict in a file schema as JSON (NumPy scalars and arrays as numbers and lists; the
    loader then checks every value as it checks a file's)."""

    def plain(value):
        converted = _from_numpy(value)
        if converted is value:
            raise UsageError("usage", f"a {type(value).__name__} cannot appear in a file's dict")
        return converted

    return json.dumps(document, default=plain)


def _text_and_name(document: Union[str, os.PathLike, dict]):
    """A file's path, YAML text, or a dict in the same schema, as (text, name)."""
    if isinstance(document, dict):
        return _document_json(document), "<dict>"
    if isinstance(document, os.PathLike) or (isinstance(document, str) and os.path.exists(document)):
        name = os.fspath(document)
        return _read_input(name), name
    if isinstance(document, str):
        return document, "<string>"
    raise UsageError("usage", f"expected a path, YAML text or a dict, got {type(document).__name__}")


def review(protocol: Union[str, os.PathLike]) -> Result:
    """The review of a protocol file (its JSON form)."""
    return _result(_call(_bellgap.review, os.fspath(protocol))["result"])
