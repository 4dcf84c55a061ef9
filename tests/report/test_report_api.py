"""`?format=html` on the answer endpoints: the report of the same answer; errors stay problem details."""

import copy

import pytest

from cohop import samples
from cohop.api import create_app
from cohop.report import install
from tests.charts.answers import FAST_SEARCH


@pytest.fixture(scope="module")
def client():
    return install(create_app({"TESTING": True})).test_client()


def test_an_assessment_as_html(client):
    body = samples.load("container_terminal")
    as_json = client.post("/v1/assessments", json=body).json
    response = client.post("/v1/assessments?format=html", json=body)
    assert response.status_code == 200 and response.mimetype == "text/html"
    page = response.get_data(as_text=True)
    assert page.startswith("<!DOCTYPE html>") and "Assessment report" in page
    for caution in as_json["cautions"]:
        assert caution in page.replace("&#x27;", "'")
    assert response.headers.get("X-Request-Id")  # the other hooks still see the answer


def test_a_replan_as_html(client):
    body = copy.deepcopy(samples.load("water_works_replan"))
    body["search"] = FAST_SEARCH
    response = client.post("/v1/replans?format=html", json=body)
    assert response.status_code == 200 and "Re-plan report" in response.get_data(as_text=True)


def test_errors_stay_problem_details(client):
    response = client.post("/v1/plans?format=html", json={"site": {}})
    assert response.status_code == 422 and response.mimetype == "application/problem+json"


def test_without_a_renderer_the_answer_is_406_before_any_work():
    plain = create_app({"TESTING": True}).test_client()
    response = plain.post("/v1/assessments?format=html", json=samples.load("water_works"))
    assert response.status_code == 406 and response.mimetype == "application/problem+json"
    assert plain.post("/v1/assessments", json=samples.load("water_works")).status_code == 200


def test_the_format_is_documented(client):
    spec = client.get("/openapi.json").json
    for path in ("/v1/assessments", "/v1/plans", "/v1/replans"):
        post = spec["paths"][path]["post"]
        assert {"name": "format", "in": "query"}.items() <= next(
            p for p in post["parameters"] if p["name"] == "format").items()
        assert "text/html" in post["responses"]["200"]["content"]


@pytest.mark.server
def test_the_real_server_renders_reports():
    import requests

    from tests.production.procs import Server

    with Server() as server:
        response = requests.post(server.url + "/v1/assessments?format=html", json=samples.load("water_works"),
                                 timeout=120)
    assert response.status_code == 200 and response.headers["content-type"].startswith("text/html")
    assert "Assessment report" in response.text
