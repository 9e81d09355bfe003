"""The fit form: a measured titration file, the titration's settings and what to vary; the fit with its ±.

API:
    ``FitForm(mixture, request=None, library=None)``, a ModalScreen that dismisses with a
    :class:`FitOutcome` or None (escape). ``request`` (a :class:`FitRequest`) fills the fields.
    enter fits (in a worker; the result is shown in the form with each value's standard
    error); ``ctrl+g`` closes and shows the measured points on the titration plot;
    ``ctrl+l`` closes and loads the fitted sample into the flask (one undoable edit).

Every number comes from :func:`chem.fit_titration`; the fields are read by chem (the file by
:func:`chem.read_titration`, the titrant by :func:`chem.find_reagent`, amounts by
:func:`chem.parse_concentration` and :func:`chem.parse_volume`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path

from textual import on, work
from textual.app import ComposeResult
from textual.binding import Binding
from textual.containers import Horizontal, Vertical
from textual.widgets import Input, Label, Static
from textual.worker import get_current_worker

import chem
from tui.widgets.entry import Entry
from tui.screens.base import CheckedForm, show_text
from tui.screens.recipe_form import named
from tui.widgets.curve_kinds import TitrationSettings


@dataclass(frozen=True)
class FitRequest:
    """The form's fields as typed."""

    path: str
    titrant: str
    conc: str
    sample: str
    vary: str
    """Parameters separated by ';' (names may hold commas), e.g. "amount:acetic acid; pKa:acetate:1"."""

    def parameters(self) -> list[str]:
        return [p.strip() for p in self.vary.split(";") if p.strip()]


@dataclass(frozen=True, eq=False)
class FitOutcome:
    """What the form was closed with: show the points ("plot") or load the fitted sample ("load")."""

    action: str
    request: FitRequest
    data: "chem.TitrationData"
    settings: TitrationSettings
    """The titration as typed (after a fit, with the fitted titrant concentration)."""
    result: "chem.FitResult | None" = None


def default_request(mixture: chem.Mixture, settings: TitrationSettings | None) -> FitRequest:
    """Fields for a first fit: the titration on display and the amount of the first ingredient."""
    first = mixture.ingredients[0].reagent.name if mixture.ingredients else ""
    vary = f"amount:{first}" if first else "offset"
    if settings is None:
        return FitRequest("", "NaOH", "0.1 M", "25 mL", vary)
    return FitRequest("", settings.titrant_name, settings.titrant_conc_text, settings.sample_text, vary)


def _value_text(value: float, stderr: float | None) -> tuple[str, str]:
    if stderr is None or not stderr > 0:
        return f"{value:.6g}", "—"
    decimals = min(max(0, 1 - int(math.floor(math.log10(stderr)))), 12)
    return f"{value:.{decimals}f}", f"{stderr:.{decimals}f}"


def result_lines(result) -> list[str]:
    """The fit as short lines for the form (formatting only)."""
    status = "converged" if result.converged else "NOT converged"
    lines = [f"{len(result.data)} points · {result.dof} degrees of freedom · {status} · "
             f"rms {result.rms_pH:.4f} pH"]
    width = max(len(p.name) for p in result.parameters)
    for p in result.parameters:
        value, err = _value_text(p.value, p.stderr)
        lines.append(f"  {p.name:<{width}}  {value:>12} ± {err:<10} {p.unit}")
    for e in result.equivalence_points:
        lines.append(f"  end point of the fitted curve {e.volume_mL:.3f} mL (pH {e.pH:.2f})")
    for g in result.gran:
        lines.append(f"  Gran {g.branch} the end point: {g.volume_mL:.3f} ± {g.sd_mL:.3f} mL")
    lines += [f"  note: {n}" for n in result.notes]
    return lines


class FitForm(CheckedForm["FitOutcome | None"]):
    """Asks for a measured titration and what to fit; fits and shows the values with their ±."""

    DEFAULT_CSS = """
    FitForm .setup-row .field-label {
        width: 18;
    }
    #fit-result {
        height: auto;
        max-height: 14;
        margin-top: 1;
    }
    #fit-error {
        height: auto;
    }
    """

    field_prefix = "fit"

    BINDINGS = [
        Binding("escape", "cancel", "Close", tooltip="Close without changing anything"),
        Binding("ctrl+g", "finish('plot')", "Plot", tooltip="Show the measured points on the titration plot"),
        Binding("ctrl+l", "finish('load')", "Load", tooltip="Load the fitted sample into the flask"),
    ]
    AUTO_FOCUS = "#fit-path"

    FIELDS = (
        ("path", "data file", "CSV with volume_mL and pH columns"),
        ("titrant", "titrant", "e.g. NaOH"),
        ("conc", "stock conc.", "titrant stock, e.g. 0.1 M"),
        ("sample", "sample volume", "e.g. 25 mL"),
        ("vary", "vary", "amount:NAME; pKa:SYSTEM:STEP; titrant; offset"),
    )

    def __init__(self, mixture: chem.Mixture, request: FitRequest | None = None,
                 library: chem.Library | None = None, titration: TitrationSettings | None = None) -> None:
        super().__init__()
        self.mixture = mixture
        self.library = library or chem.load_library()
        self.request = request or default_request(mixture, titration)
        self.result = None
        """The last fit (for the request it answers: :attr:`fitted_for`)."""
        self.fitted_for: FitRequest | None = None
        self._data_cache: tuple[str, object] | None = None

    def compose(self) -> ComposeResult:
        start = {"path": self.request.path, "titrant": self.request.titrant, "conc": self.request.conc,
                 "sample": self.request.sample, "vary": self.request.vary}
        with Vertical(classes="dialog fit"):
            yield Label("Fit a measured titration", classes="dialog-heading")
            for key, label, hint in self.FIELDS:
                with Horizontal(classes="setup-row"):
                    yield Label(label, classes="field-label")
                    yield Entry(start[key], placeholder=hint, id=f"fit-{key}", compact=True)
            yield Label("", id="fit-error", classes="dialog-error")
            yield Static("", id="fit-result", classes="dialog-text")
            yield Label("enter fit · ctrl+g plot the points · ctrl+l load the fitted sample · esc close",
                        classes="dialog-hint")

    def on_mount(self) -> None:
        self._check()

    # -- reading the fields ------------------------------------------------------------------
    def current(self) -> FitRequest:
        def text(key: str) -> str:
            return self.query_one(f"#fit-{key}", Input).value.strip()

        return FitRequest(text("path"), text("titrant"), text("conc"), text("sample"), text("vary"))

    def _data(self, path: str):
        from chem import read_titration

        if self._data_cache is not None and self._data_cache[0] == path:
            return self._data_cache[1]
        data = read_titration(Path(path).expanduser())
        self._data_cache = (path, data)
        return data

    def read(self):
        """(data, titrant, stock mol/L, sample L) from the fields; raises :class:`chem.ChemError`."""
        req = self.current()
        if not req.path:
            raise chem.UnitError("data file: give the path of a CSV file")
        data = self._data(req.path)
        settings = TitrationSettings(req.titrant, req.conc, req.sample, req.sample)
        titrant = settings.titrant(self.mixture, self.library)
        return data, titrant, settings.titrant_conc(titrant), settings.sample_volume()

    def problems(self) -> dict[str, str]:
        req = self.current()
        labels = {key: label for key, label, _ in self.FIELDS}
        out: dict[str, str] = {}
        settings = TitrationSettings(req.titrant, req.conc, req.sample, req.sample)
        checks = (("path", lambda: self._path_ok(req.path)),
                  ("titrant", lambda: settings.titrant(self.mixture, self.library)),
                  ("conc", lambda: settings.titrant_conc(None)),
                  ("sample", settings.sample_volume),
                  ("vary", lambda: self._vary_ok(req)))
        for key, check in checks:
            try:
                check()
            except chem.ChemError as exc:
                out[key] = named(labels[key], exc)
        return out

    def _path_ok(self, path: str) -> None:
        if not path:
            raise chem.UnitError("give the path of a CSV file")
        self._data(path)

    def _vary_ok(self, req: FitRequest) -> None:
        from chem import FitError, parse_parameter

        params = req.parameters()
        if not params:
            raise FitError("give at least one parameter, e.g. amount:NAME; offset")
        try:
            from chem import find_reagent

            titrant = find_reagent(req.titrant, self.mixture, self.library) if req.titrant else None
        except chem.ChemError:
            titrant = None
        for p in params:
            parse_parameter(p, self.mixture, titrant)

    # -- events ------------------------------------------------------------------------------
    @on(Input.Changed, "#fit-path")
    def _path_typed(self) -> None:
        self._data_cache = None                     # read the file again (it may have changed on disk)

    def accept(self) -> None:
        """Enter with every field valid: fit (in a worker) and show the values with their ±."""
        req = self.current()
        data, titrant, conc, sample = self.read()
        show_text(self.query_one("#fit-result", Static), "fitting…")
        self._fit(req, data, titrant, conc, sample)

    @work(thread=True, exclusive=True, group="fit", exit_on_error=False, description="fit")
    def _fit(self, req: FitRequest, data, titrant, conc: float, sample: float) -> None:
        from chem import fit_titration

        try:
            result = fit_titration(self.mixture, data, titrant, conc, sample, req.parameters())
        except chem.ChemError as exc:
            if not get_current_worker().is_cancelled:
                self.app.call_from_thread(self._failed, req, str(exc))
            return
        if not get_current_worker().is_cancelled:
            self.app.call_from_thread(self._fitted, req, result)

    def _failed(self, req: FitRequest, message: str) -> None:
        if req == self.current():
            self.result, self.fitted_for = None, None
            show_text(self.query_one("#fit-result", Static), f"not fitted: {message}")

    def _fitted(self, req: FitRequest, result) -> None:
        if req != self.current():                   # the fields changed meanwhile: an answer to an old question
            return
        self.result, self.fitted_for = result, req
        show_text(self.query_one("#fit-result", Static), "\n".join(result_lines(result)))

    # -- closing -----------------------------------------------------------------------------
    def action_finish(self, action: str) -> None:
        problems = self._check()
        if problems:
            self.app.bell()
            return
        req = self.current()
        data = self._data(req.path)
        result = self.result if self.fitted_for == req else None
        if action == "load" and (result is None or result.mixture is None):
            why = "fit first (enter)" if result is None else "; ".join(result.notes)
            show_text(self.query_one("#fit-error", Label), f"nothing to load: {why}")
            self.app.bell()
            return
        conc = req.conc
        if result is not None and any(p.kind == "titrant" for p in self._params(req, result.titrant)):
            conc = f"{result.titrant_conc:.6g} M"
        to = f"{float(data.volume_mL[-1]):g} mL"
        self.dismiss(FitOutcome(action, req, data, TitrationSettings(req.titrant, conc, req.sample, to), result))

    def _params(self, req: FitRequest, titrant):
        from chem import parse_parameter

        return [parse_parameter(p, self.mixture, titrant) for p in req.parameters()]
