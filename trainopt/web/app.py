"""The web application: the page, its map pictures, and the JSON API.

``create_app(case)`` builds a FastAPI application around one case loaded at start-up; no
request names a file. Routes:

- ``GET /``: the page (a form; the answer rendered on the server; no script needed);
- ``GET /picture/{name}.png``: a running unit's map at the page's answer;
- ``GET /api/optimize``: the JSON of ``trainopt optimize CASE --json``;
- ``POST /api/evaluate``: the JSON of ``trainopt evaluate CASE --split ... --json``;
- ``GET /docs``: the API's OpenAPI page, made by the framework.

Errors are our one-line messages (``error: field: problem; fix``) with status 400 (413 for
a request too large); an API answer's server time (wall, and CPU of its thread) is in
its ``Server-Timing`` header.
"""

from __future__ import annotations

import time
from importlib.resources import files
from typing import Annotated

from fastapi import Body, FastAPI, Query, Request
from fastapi.exceptions import RequestValidationError
from fastapi.responses import HTMLResponse, JSONResponse, Response
from fastapi.staticfiles import StaticFiles
from fastapi.templating import Jinja2Templates
from pydantic import BaseModel, ConfigDict, Field

from trainopt.case.loading import Case
from trainopt.errors import InputError, TrainoptError
from trainopt.report.result_json import result_json
from trainopt.station.result import CAUTION
from trainopt.web import form as page_form
from trainopt.web import view
from trainopt.web.answers import Answers
from trainopt.web.inputs import MAX_TEXT, MAX_UNITS, read_conditions
from trainopt.web.pictures import map_png, picture_rows

MAX_BODY = 16_384
"""Largest request body accepted [bytes]."""

MAX_QUERY = 4_096
"""Longest query string accepted [characters]."""

Text = Annotated[str | None, Query(max_length=MAX_TEXT)]
Names = Annotated[list[str], Query(max_length=MAX_UNITS)]


class EvaluateRequest(BaseModel):
    """A split to evaluate: net flow with its unit per running unit, and the conditions."""

    model_config = ConfigDict(extra="forbid")
    split: dict[str, Annotated[str, Field(max_length=MAX_TEXT)]] = Field(
        ..., max_length=MAX_UNITS, description="Unit name to net flow with its unit, "
        "e.g. {\"A\": \"150 kg/s\"}; units left out are stopped.")
    demand: str | None = Field(None, max_length=MAX_TEXT, description="Throughput the split "
                               "must add up to; the case's demand by default.")
    suction_pressure: str | None = Field(None, max_length=MAX_TEXT)
    discharge_pressure: str | None = Field(None, max_length=MAX_TEXT)
    suction_temperature: str | None = Field(None, max_length=MAX_TEXT)
    ambient_temperature: str | None = Field(None, max_length=MAX_TEXT)


def _one_line(message: str, status: int = 400) -> JSONResponse:
    return JSONResponse({"error": message}, status_code=status)


def _clock() -> tuple[float, float]:
    return time.perf_counter(), time.thread_time()


def _json(result, started: tuple[float, float]) -> Response:
    """The result's JSON text with the answer's wall and CPU time [ms] in ``Server-Timing``."""
    text = result_json(result)
    wall_ms = 1e3 * (time.perf_counter() - started[0])
    cpu_ms = 1e3 * (time.thread_time() - started[1])
    return Response(text, media_type="application/json",
                    headers={"Server-Timing": f"answer;dur={wall_ms:.1f}, cpu;dur={cpu_ms:.1f}"})


def create_app(case: Case) -> FastAPI:
    """The web application for one case.

    Parameters
    ----------
    case : Case
        Loaded once by the caller (``trainopt serve CASE``); requests never name files.

    Returns
    -------
    fastapi.FastAPI
    """
    from fastapi_offline import FastAPIOffline  # the API page's scripts shipped, not fetched

    app = FastAPIOffline(title=f"trainopt: {case.name}", description=CAUTION, version="1",
                         redoc_url=None)
    answers = Answers(case)
    app.state.answers = answers
    here = files("trainopt.web")
    templates = Jinja2Templates(directory=str(here / "templates"))
    app.mount("/static", StaticFiles(directory=str(here / "static")), name="static")

    @app.middleware("http")
    async def limit_size(request: Request, call_next):
        if len(request.url.query) > MAX_QUERY:
            return _one_line(f"error: query: is {len(request.url.query)} characters long; "
                             f"send at most {MAX_QUERY}", 413)
        if request.method == "POST":
            length = request.headers.get("content-length")
            if length is None or not length.isdigit() or int(length) > MAX_BODY:
                return _one_line(f"error: body: give a Content-Length of at most {MAX_BODY} "
                                 "bytes", 413)
        return await call_next(request)

    @app.exception_handler(TrainoptError)
    async def our_error(request: Request, exc: TrainoptError):
        return _one_line(f"error: {exc}")

    @app.exception_handler(RequestValidationError)
    async def bad_request(request: Request, exc: RequestValidationError):
        err = exc.errors()[0]
        where = ".".join(str(p) for p in err["loc"])
        return _one_line(f"error: {where}: {err['msg']}")

    @app.get("/api/optimize", summary="Least-power split (as `trainopt optimize --json`)")
    def api_optimize(demand: Text = None, offline: Names = (), must_run: Names = (),
                     available: Names = (), objective: Text = None,
                     suction_pressure: Text = None, discharge_pressure: Text = None,
                     suction_temperature: Text = None,
                     ambient_temperature: Text = None) -> Response:
        """The least-objective split of a demand; JSON exactly as the command line prints.

        Every value is text with its unit (``demand=40 MMSCMD``, ``suction_pressure=44
        bar``); what is not given is the case's. ``offline``, ``must_run`` and
        ``available`` may repeat, one unit name each.
        """
        started = _clock()
        conditions = read_conditions(
            case, suction_pressure=suction_pressure, discharge_pressure=discharge_pressure,
            suction_temperature=suction_temperature, ambient_temperature=ambient_temperature,
            offline=offline, must_run=must_run, available=available, objective=objective)
        return _json(answers.optimize(conditions, demand), started)

    @app.post("/api/evaluate", summary="A given split (as `trainopt evaluate --json`)")
    def api_evaluate(request: EvaluateRequest = Body(...)) -> Response:  # noqa: B008
        """A split on the true model; JSON exactly as the command line prints."""
        started = _clock()
        conditions = read_conditions(
            case, suction_pressure=request.suction_pressure,
            discharge_pressure=request.discharge_pressure,
            suction_temperature=request.suction_temperature,
            ambient_temperature=request.ambient_temperature)
        split = {name.strip(): value for name, value in request.split.items()}
        return _json(answers.evaluate(conditions, split, request.demand), started)

    @app.get("/", response_class=HTMLResponse, include_in_schema=False)
    def page(request: Request):
        context = {"case": case, "caution": CAUTION, "form": page_form,
                   "words": page_form.STATUS_WORDS, "error": None, "query": request.url.query}
        status = 200
        try:
            asked = page_form.read_form(case, request.query_params)
            context["values"] = asked.values
            context.update(_answer_context(case, answers, asked))
        except TrainoptError as exc:
            context["values"] = getattr(exc, "values", page_form.defaults(case))
            context["error"] = f"error: {exc}"
            status = 400
        return templates.TemplateResponse(request, "page.html", context, status_code=status)

    @app.get("/picture/{name}.png", include_in_schema=False)
    def picture(name: str, request: Request):
        asked = page_form.read_form(case, request.query_params)
        optimum = answers.optimize(asked.conditions, asked.demand)
        rows = picture_rows(optimum)
        if name not in rows:
            raise InputError("picture", f"'{name[:MAX_TEXT]}' is not a running unit here",
                             f"use one of {', '.join(rows) or 'none'}")
        current = None
        if asked.current:
            evaluated = answers.evaluate(asked.conditions, asked.current, asked.demand)
            current = picture_rows(evaluated).get(name)
        return Response(map_png(case, name, rows[name], current), media_type="image/png",
                        headers={"Cache-Control": "private, max-age=600"})

    return app


def _answer_context(case: Case, answers: Answers, asked) -> dict:
    """The page's answer: optimum, its pictures, the running set's range, the split now."""
    started = time.perf_counter()
    optimum = answers.optimize(asked.conditions, asked.demand)
    unit = asked.flow_unit
    out = {"optimum": optimum, "flow_unit": unit, "pictures": list(picture_rows(optimum)),
           "units": view.unit_table(case, optimum, unit) if optimum.status != "infeasible"
           else [], "totals": view.totals(case, optimum, unit), "savings": view.savings(optimum),
           "range": None, "current": None, "current_error": None}
    station = None
    if case.interstage_header is None:
        station = answers.station(asked.conditions)
    out["range"] = view.running_range(case, station, view.running_names(optimum), unit)
    if asked.current:
        try:
            now = answers.evaluate(asked.conditions, asked.current, asked.demand)
            out["current"] = {
                "result": now,
                "rows": view.comparison(view.unit_table(case, now, unit), out["units"]),
                "totals": view.totals(case, now, unit),
                "range": view.running_range(case, station, view.running_names(now), unit),
                "extra_kW": (f"{now.total('shaft_power_kW') - optimum.total('shaft_power_kW'):,.0f}"
                             if now.status != "infeasible" and optimum.status != "infeasible"
                             else None)}
        except TrainoptError as exc:
            out["current_error"] = f"error: {exc}"
    out["answer_ms"] = f"{1e3 * (time.perf_counter() - started):.0f}"
    return out
