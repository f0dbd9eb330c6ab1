"""The web API and page, through FastAPI's test client, against the command line.

The API must print what ``trainopt optimize --json`` and ``trainopt evaluate --json`` print
for the same inputs (typer's CliRunner, in the same process), refuse bad input with the
command line's one-line message and a 4xx status, keep the station reduced between
demands, and re-reduce once when the conditions change. Every value compared is a
regression value (own output): the numbers themselves are checked against outside
references in tests/station.
"""

import html
import json
from pathlib import Path

import pytest
from fastapi.testclient import TestClient
from typer.testing import CliRunner

import trainopt
from trainopt.cli.app import app as cli_app
from trainopt.station.result import CAUTION
from trainopt.web import create_app
from trainopt.web.app import MAX_BODY, MAX_QUERY

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "cases" / "demo" / "station.yaml"
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"  # PNG specification (ISO/IEC 15948), file signature
TIMINGS = ("build_seconds", "solve_seconds")  # wall-clock times: differ between any two runs


@pytest.fixture(scope="module")
def client():
    return TestClient(create_app(trainopt.load_case(DEMO)))


def cli(*args):
    result = CliRunner().invoke(cli_app, [str(a) for a in args])
    if result.exception and not isinstance(result.exception, SystemExit):
        raise result.exception
    return result


def without_timings(data: dict) -> dict:
    for key in TIMINGS:
        data.get("solver", {}).pop(key)
    return data


def test_optimize_is_the_command_lines_json(client):
    result = cli("optimize", DEMO, "--demand", "40 MMSCMD", "--offline", "B", "--json")
    assert result.exit_code == 0, result.output
    answer = client.get("/api/optimize", params={"demand": "40 MMSCMD", "offline": "B"})
    assert answer.status_code == 200
    assert answer.headers["content-type"] == "application/json"
    assert answer.headers["server-timing"].startswith("answer;dur=")
    # the same text but for the solver's wall-clock times
    assert without_timings(json.loads(answer.text)) == without_timings(json.loads(result.stdout))
    assert json.loads(answer.text)["caution"] == CAUTION


def test_evaluate_is_the_command_lines_json(client):
    split = {"A": "150 kg/s", "C": "233.96387242771 kg/s"}  # adds up to the case's demand
    result = cli("evaluate", DEMO, *[f"--split={k}={v}" for k, v in split.items()], "--json")
    assert result.exit_code == 0, result.output
    answer = client.post("/api/evaluate", json={"split": split})
    assert answer.status_code == 200
    assert answer.text == result.stdout
    assert json.loads(answer.text)["status"] == "evaluated"


@pytest.mark.parametrize(("params", "args"), [
    ({"offline": "Z"}, ("--offline", "Z")),                       # unknown unit
    ({"demand": "-3 MMSCMD"}, ("--demand", "-3 MMSCMD")),         # negative demand
    ({"demand": "40 furlongs"}, ("--demand", "40 furlongs")),     # wrong unit text
    ({"objective": "speed"}, ("--objective", "speed")),
])
def test_bad_optimize_inputs_get_the_command_lines_line(client, params, args):
    result = cli("optimize", DEMO, *args)
    assert result.exit_code == 2
    answer = client.get("/api/optimize", params=params)
    assert answer.status_code == 400
    assert answer.json() == {"error": result.stderr.strip()}
    assert "\n" not in answer.json()["error"]


def test_bad_evaluate_input_gets_the_command_lines_line(client):
    result = cli("evaluate", DEMO, "--split", "Z=10 kg/s")
    answer = client.post("/api/evaluate", json={"split": {"Z": "10 kg/s"}})
    assert answer.status_code == 400
    assert answer.json() == {"error": result.stderr.strip()}


def test_requests_are_bounded(client):
    long = client.get("/api/optimize", params={"demand": "4" * 41 + " kg/s"})
    assert long.status_code == 400
    assert long.json()["error"].startswith("error: query.demand:")
    huge = client.get("/api/optimize?" + "offline=A&" * (MAX_QUERY // 10 + 1))
    assert huge.status_code == 413
    body = client.post("/api/evaluate", content=b"{" + b" " * MAX_BODY + b"}",
                       headers={"content-type": "application/json"})
    assert body.status_code == 413
    extra = client.post("/api/evaluate", json={"split": {"A": "1 kg/s"}, "file": "/etc/x"})
    assert extra.status_code == 400
    assert extra.json()["error"] == "error: body.file: Extra inputs are not permitted"
    clash = client.get("/api/optimize", params={"offline": "A", "must_run": "A"})
    assert clash.status_code == 400
    assert "give each unit one status" in clash.json()["error"]


def test_station_stays_reduced_while_conditions_hold():
    web = create_app(trainopt.load_case(DEMO))
    client = TestClient(web)
    answers = web.state.answers
    for demand in ("38 MMSCMD", "41 MMSCMD", "43 MMSCMD"):
        answer = client.get("/api/optimize", params={"demand": demand})
        assert answer.status_code == 200
    assert answers.reductions == 1
    # the kept station's re-solved model gives what a fresh optimisation gives
    fresh = trainopt.optimize(trainopt.load_case(DEMO), demand="43 MMSCMD").to_dict()
    assert without_timings(answer.json()) == without_timings(json.loads(json.dumps(fresh)))
    # a unit's status is asked of the kept station: its curves are reused, not reduced again
    spare = client.get("/api/optimize", params={"demand": "41 MMSCMD", "offline": "B",
                                                "must_run": "D"}).json()
    assert answers.reductions == 1
    assert {u["name"]: u["status"] for u in spare["units"]}["B"] == "offline"
    assert {u["name"]: u["running"] for u in spare["units"]}["D"] is True
    low = client.get("/api/optimize", params={"demand": "41 MMSCMD"}).json()
    high = client.get("/api/optimize", params={"demand": "41 MMSCMD",
                                               "discharge_pressure": "70 bar"}).json()
    assert answers.reductions == 2  # a change of conditions reduces once
    assert high["discharge_pressure_kPa"] == pytest.approx(7000.0, rel=1e-12)
    # more pressure ratio for the same flow takes more power (common practice)
    assert high["total_shaft_power_kW"] > low["total_shaft_power_kW"]


def test_conditions_and_statuses_reach_the_answer(client):
    data = client.get("/api/optimize", params={
        "demand": "30 MMSCMD", "must_run": "D", "suction_temperature": "30 degC",
        "ambient_temperature": "35 degC", "suction_pressure": "43 bar"}).json()
    assert data["status"] == "optimal"
    assert {u["name"]: u["running"] for u in data["units"]}["D"] is True
    assert data["suction_temperature_C"] == pytest.approx(30.0, abs=1e-9)
    assert data["ambient_temperature_C"] == pytest.approx(35.0, abs=1e-9)
    assert data["suction_pressure_kPa"] == pytest.approx(4300.0, rel=1e-12)


def test_page_and_pictures(client):
    page = client.get("/", params={"demand_value": "40", "demand_unit": "MMSCMD",
                                   "status_B": "offline"})
    assert page.status_code == 200
    assert CAUTION in html.unescape(page.text)
    assert 'data-unit="B"><th>B</th><td colspan="11">stopped (offline)' in page.text
    names = [n for n in ("A", "C", "D") if f'/picture/{n}.png?' in page.text]
    assert names
    picture = client.get(f"/picture/{names[0]}.png",
                         params={"demand_value": "40", "status_B": "offline"})
    assert picture.status_code == 200
    assert picture.content.startswith(PNG_SIGNATURE)
    assert client.get("/picture/B.png", params={"status_B": "offline"}).status_code == 400
    assert "//" not in page.text.replace("<!--", "")  # no address elsewhere: nothing fetched


def test_page_compares_the_split_run_now(client):
    page = client.get("/", params={"now_A": "150", "now_C": "233.96387242771",
                                   "now_unit": "kg/s"})
    assert page.status_code == 200
    assert 'id="comparison"' in page.text
    assert "more shaft power than the recommendation" in page.text


def test_page_refuses_bad_form_with_one_line(client):
    page = client.get("/", params={"demand_value": "40", "demand_unit": "furlongs"})
    assert page.status_code == 400
    assert CAUTION in html.unescape(page.text)
    assert ("error: demand_unit: &#39;furlongs&#39; is not a unit offered here; use one of "
            "MMSCMD, MMSCFD, Sm3/h, kg/s, t/h") in page.text
    page = client.get("/", params={"demand_value": "-5"})
    assert page.status_code == 400
    assert "error: demand: -5.0 MMSCMD is negative" in page.text


def test_docs_are_the_frameworks(client):
    schema = client.get("/openapi.json").json()
    assert {"/api/optimize", "/api/evaluate"} <= set(schema["paths"])
    assert CAUTION in schema["info"]["description"]
    docs = client.get("/docs")
    assert docs.status_code == 200
    assert "https://" not in docs.text  # its script and style are served from the package
    assert client.get("/static-offline-docs/swagger-ui-bundle.js").status_code == 200


def test_serve_keeps_to_this_computer_unless_told():
    result = cli("serve", DEMO, "--host", "0.0.0.0")
    assert result.exit_code == 2
    assert result.stderr.strip() == ("error: --host: 0.0.0.0 would let other computers reach "
                                     "the page; keep the default 127.0.0.1, or add "
                                     "--allow-other-hosts")


def test_series_trains_show_one_map_per_section():
    trains = TestClient(create_app(trainopt.load_case(ROOT / "cases" / "demo" / "trains.yaml")))
    page = trains.get("/")
    assert page.status_code == 200
    assert "/picture/T1-LP.png?" in page.text
    assert "/picture/T1-HP.png?" in page.text
    picture = trains.get("/picture/T1-HP.png")
    assert picture.status_code == 200
    assert picture.content.startswith(PNG_SIGNATURE)
