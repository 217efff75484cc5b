"""The section page's HTTP API without a browser (Starlette's TestClient).

Every endpoint on a copy of the sample area; bad requests get a clear 4xx JSON
message and the server keeps answering; Host, token and path-traversal checks.
References outside the project: pyproj (the lon/lat <-> project CRS grids),
tomlkit/tomllib (the saved file), numpy.gradient-free closed forms (hillshade of
a plane, Lambert's cosine law).
"""

from __future__ import annotations

import json
import math
import tomllib
from pathlib import Path

import numpy as np
import pyproj
import pytest

pytest.importorskip("starlette")
pytest.importorskip("httpx")
from starlette.testclient import TestClient  # noqa: E402

from mapsection.checks.status import status_of as check_status  # noqa: E402
from mapsection.web.api import ViewState, hillshade, save_line  # noqa: E402
from mapsection.web.app import create_app  # noqa: E402

SAMPLE = Path(__file__).resolve().parents[1] / "sample_area"
TOKEN = "test-token-123"
BASE = "http://127.0.0.1:8765"


@pytest.fixture(scope="module")
def state(project_copy):
    s = ViewState(project_copy)
    yield s
    s.close()


@pytest.fixture(scope="module")
def client(state):
    with TestClient(create_app(state, TOKEN), base_url=BASE, raise_server_exceptions=False,
                    headers={"X-Token": TOKEN}) as c:
        yield c


def _line(state, name="A"):
    return [list(map(float, v)) for v in state.project.section(name).line]


# --- endpoints -----------------------------------------------------------------------------
def test_page_and_static_files(client):
    r = client.get("/")
    assert r.status_code == 200 and "text/html" in r.headers["content-type"]
    assert "/static/view.js" in r.text and "http" not in r.text.replace("http://www.w3", "")
    assert client.get("/static/view.js").status_code == 200
    assert client.get("/static/vendor/leaflet/leaflet.js").status_code == 200
    lic = client.get("/static/vendor/leaflet/LICENSE")
    assert lic.status_code == 200 and "Copyright" in lic.text


def test_project(client, state):
    d = client.get("/api/project").json()
    assert d["crs"]["code"] == "EPSG:32611"
    assert [u["unit"] for u in d["column"]] == [u.name for u in state.project.column.units]
    assert all(u["colour"].startswith("#") for u in d["column"])
    # the sample column takes chart colours by age (Osk Sandstone: Jurassic)
    from mapsection.render.colours import chart_colour

    assert {u["unit"]: u["colour"] for u in d["column"]}["Osk Sandstone"] == \
        chart_colour("Jurassic")
    assert [s["name"] for s in d["sections"]] == ["A", "B"]
    left, bottom, right, top = d["extent"]
    assert left < right and bottom < top
    assert d["caution"].startswith("A draft section is an interpretation")


def test_grids_match_pyproj(client):
    """The page's bilinear grids reproduce pyproj's transform to well under a metre."""
    d = client.get("/api/project").json()
    g = d["grids"]
    n = g["n"]
    fwd = pyproj.Transformer.from_crs("EPSG:4326", "EPSG:32611", always_xy=True)
    rng = np.random.default_rng(3)
    lo0, la0, lo1, la1 = d["extent_lonlat"]
    lon, lat = rng.uniform(lo0, lo1, 200), rng.uniform(la0, la1, 200)
    t = g["lonlat_to_xy"]

    def interp(t, u, v):
        a, b = np.asarray(t["a"]).reshape(n, n), np.asarray(t["b"]).reshape(n, n)
        fi, fj = (u - t["x0"]) / t["dx"], (v - t["y0"]) / t["dy"]
        i = np.clip(np.floor(fi).astype(int), 0, n - 2)
        j = np.clip(np.floor(fj).astype(int), 0, n - 2)
        s, r = fi - i, fj - j

        def f(m):
            return ((1 - s) * (1 - r) * m[j, i] + s * (1 - r) * m[j, i + 1]
                    + (1 - s) * r * m[j + 1, i] + s * r * m[j + 1, i + 1])
        return f(a), f(b)

    x, y = interp(t, lon, lat)
    ex, ey = fwd.transform(lon, lat)
    assert np.max(np.hypot(x - ex, y - ey)) < 0.05  # metres
    lon2, lat2 = interp(g["xy_to_lonlat"], ex, ey)
    assert np.max(np.abs(lon2 - lon)) < 1e-6 and np.max(np.abs(lat2 - lat)) < 1e-6


def test_map_layers_are_geojson_in_lonlat(client, state):
    units = client.get("/api/map/units").json()
    assert units["type"] == "FeatureCollection"
    assert {f["properties"]["unit"] for f in units["features"]} == set(
        state.inputs.map_data.unit_list)
    lo0, la0, lo1, la1 = client.get("/api/project").json()["extent_lonlat"]
    ring = units["features"][0]["geometry"]["coordinates"][0][0]
    assert lo0 - 0.01 <= ring[0][0] <= lo1 + 0.01 and la0 - 0.01 <= ring[0][1] <= la1 + 0.01
    faults = client.get("/api/map/faults").json()
    assert faults["features"] and faults["features"][0]["properties"]["kind"] == "thrust"
    atts = client.get("/api/map/attitudes").json()
    assert len(atts["features"]) == len(state.inputs.attitudes)
    p = atts["features"][0]["properties"]
    assert set(p) >= {"id", "strike", "dip", "overturned"}


def test_hillshade_png_and_bounds(client):
    r = client.get("/api/map/hillshade.png")
    assert r.status_code == 200 and r.content[:8] == b"\x89PNG\r\n\x1a\n"
    (s, w), (n, e) = json.loads(r.headers["X-Bounds"])
    lo0, la0, lo1, la1 = client.get("/api/project").json()["extent_lonlat"]
    assert s < n and w < e and abs(s - la0) < 0.02 and abs(e - lo1) < 0.02


def test_hillshade_of_a_plane_follows_lamberts_law():
    # Lambert's cosine law: a plane of slope b facing the light (light altitude a) is lit
    # cos(90 - a - b); facing away, cos(90 - a + b).
    z = np.tile(np.arange(6.0), (5, 1)) * 10.0  # rises to the east, 45 degrees, faces west
    lit_west = hillshade(z, 10.0, 10.0, azimuth=270.0, altitude=60.0)[2, 2]
    lit_east = hillshade(z, 10.0, 10.0, azimuth=90.0, altitude=60.0)[2, 2]
    assert lit_west == pytest.approx(math.cos(math.radians(90 - 60 - 45)), abs=1e-9)
    assert lit_east == pytest.approx(math.cos(math.radians(90 - 60 + 45)), abs=1e-9)
    # lit from the north-west (the tool's default), a west-facing slope sits in between
    assert lit_east < hillshade(z, 10.0, 10.0)[2, 2] < 1


def test_section_without_draft(client, state):
    r = client.post("/api/section", json={"line": _line(state), "section": "A", "draft": False})
    assert r.status_code == 200, r.text
    d = r.json()
    prof = d["profile"]
    assert len(prof["distance_m"]) == len(prof["elevation_m"]) > 10
    assert prof["distance_m"][0] == 0
    assert prof["distance_m"][-1] == pytest.approx(d["line"]["length_m"], abs=0.1)
    assert d["geology"]["intervals"] and d["geology"]["contacts"]
    dips = d["dips"]
    assert len(dips["distance_m"]) == len(dips["elevation_m"]) == len(dips["apparent_dip"]) \
        == len(dips["id"]) > 0
    assert "checks" not in d and "horizons" not in d


def test_section_matches_the_library(state, client):
    """The endpoint reports what SectionSession.run gives for the same line."""
    from mapsection.session import SectionSession

    line = _line(state, "B")
    d = client.post("/api/section", json={"line": line, "section": "B"}).json()
    with SectionSession.from_project(state.project, "B", warn=lambda m: None) as s:
        ref = s.run()
    assert [iv["unit"] for iv in d["geology"]["intervals"]] == \
        [iv.unit for iv in ref.geology.intervals]
    assert np.allclose([c["distance_m"] for c in d["geology"]["contacts"]],
                       [c.distance_m for c in ref.geology.contacts], atol=0.06)
    assert np.allclose(d["dips"]["apparent_dip"], ref.dips.apparent_dip, atol=0.06)


def test_tiled_map_gives_the_same_surface_geology(state):
    """The page's tiled map (faster moves) gives what the map as read gives."""
    from mapsection.geology import surface_geology
    from mapsection.line import SectionLine

    rng = np.random.default_rng(7)
    base = np.asarray(state.project.section("A").line, float)
    assert len(state.map_tiles.units) > len(state.inputs.map_data.units)
    for _ in range(25):
        v = base + rng.uniform(-2000, 2000, (2, 2))
        line = SectionLine(v, state.project.crs, "A")
        a = surface_geology(state.map_tiles, line, warn=lambda m: None)
        b = surface_geology(state.inputs.map_data, line, warn=lambda m: None)
        assert [iv.unit for iv in a.intervals] == [iv.unit for iv in b.intervals]
        assert np.allclose([iv.end_m for iv in a.intervals], [iv.end_m for iv in b.intervals],
                           atol=1e-6)
        assert [(c.unit_before, c.unit_after) for c in a.contacts] == \
            [(c.unit_before, c.unit_after) for c in b.contacts]


def test_section_with_draft_and_checks(client, state, sample_statuses):
    d = client.post("/api/section", json={"line": _line(state), "section": "A",
                                          "draft": True}).json()
    assert d["horizons"] and d["units"] and d["faults"]
    assert set(d["checks"]) == {"topography", "restoration", "area_balance", "kinematics"}
    for t in d["checks"].values():
        assert t["status"] in ("pass", "fail", "not_tested")
    # the page shows the library's own verdicts for the section (what `mapsection check` says)
    assert {k: t["status"] for k, t in d["checks"].items()} == sample_statuses("A")


def test_check_status_mapping():
    assert check_status({"passed": True}) == "pass"
    assert check_status({"passed": False}) == "fail"
    assert check_status({"passed": None}) == "not_tested"
    assert check_status({}) == "not_tested"
    assert check_status({"passed": True, "status": "not tested"}) == "not_tested"
    assert check_status({"status": "fail"}) == "fail"


# --- bad requests: clear 4xx JSON, and the server keeps answering --------------------------
@pytest.mark.parametrize("body, status, words", [
    (b"{not json", 400, "not valid JSON"),
    (b"[1, 2]", 400, "JSON object"),
    (json.dumps({"line": [[604658, 5218819]], "section": "A"}).encode(), 422,
     "at least two vertices"),
    (json.dumps({"line": [[1, 2], ["a", 3]], "section": "A"}).encode(), 400, "line[1]"),
    (json.dumps({"line": [[0, 0], [1000, 1000]], "section": "A"}).encode(), 422,
     "outside the DEM"),
    (json.dumps({"line": [[604658, 5218819], [612195, 5213542]], "section": "Z"}).encode(),
     404, "section 'Z'"),
    (json.dumps({"line": [[604658, 5218819], [612195, 5213542]], "section": "A",
                 "draft": "yes"}).encode(), 400, "draft"),
])
def test_bad_section_requests(client, state, body, status, words):
    r = client.post("/api/section", content=body, headers={"Content-Type": "application/json"})
    assert r.status_code == status, r.text
    assert words in r.json()["error"]
    assert client.post("/api/section", json={"line": _line(state), "section": "A"}) \
        .status_code == 200


def test_host_and_token_checks(state):
    app = create_app(state, TOKEN)
    with TestClient(app, base_url=BASE) as c:
        assert c.get("/api/project").status_code == 403  # no token
        assert c.get("/api/project", headers={"X-Token": "wrong"}).status_code == 403
        assert c.get(f"/api/project?token={TOKEN}").status_code == 200
        assert c.get("/api/project", headers={"X-Token": TOKEN}).status_code == 200
        assert c.get("/").status_code == 403
        # DNS rebinding: a page of another site whose name now points at 127.0.0.1
        r = c.get("/api/project", headers={"X-Token": TOKEN, "Host": "evil.example:8765"})
        assert r.status_code == 403 and "host" in r.json()["error"]
        assert c.get("/api/project", headers={"X-Token": TOKEN,
                                              "Host": "localhost:8765"}).status_code == 200
    with TestClient(app, base_url="http://testserver") as c:
        assert c.get(f"/api/project?token={TOKEN}").status_code == 403


@pytest.mark.parametrize("path", [
    "/static/../api.py", "/static/%2e%2e/api.py", "/static/vendor/../../app.py",
    "/static/..%2fapi.py", "/static/%2e%2e%2f%2e%2e%2fproject.toml", "/static//etc/passwd",
    "/static/vendor/leaflet/../../../../__init__.py",
])
def test_path_traversal_refused(client, path):
    r = client.get(path)
    assert r.status_code in (400, 403, 404)
    assert "import" not in r.text and "[dem]" not in r.text and "root:" not in r.text


def test_save_keeps_comments_and_writes_a_backup(client, state, project_copy):
    before = project_copy.read_text(encoding="utf-8")
    line = [[604700.0, 5218800.0], [608000.5, 5216000.25], [612100.0, 5213600.0]]
    r = client.post("/api/save", json={"section": "A", "line": line})
    assert r.status_code == 200, r.text
    after = project_copy.read_text(encoding="utf-8")
    assert project_copy.with_name("project.toml.bak").read_text(encoding="utf-8") == before
    # every comment line of the file is still there, in order
    assert [ln for ln in after.splitlines() if ln.lstrip().startswith("#")] == \
        [ln for ln in before.splitlines() if ln.lstrip().startswith("#")]
    data = tomllib.loads(after)
    assert data["section"][0]["line"] == line
    assert data["section"][1] == tomllib.loads(before)["section"][1]
    # a new name adds a section with the settings of the one it was drawn from
    r = client.post("/api/save", json={"section": "C", "line": line[:2], "base": "B"})
    assert r.status_code == 200 and r.json()["new"] is True
    data = tomllib.loads(project_copy.read_text(encoding="utf-8"))
    assert data["section"][2] == {"name": "C", "line": line[:2], "corridor": 600.0,
                                  "method": "arc"}
    assert client.post("/api/section", json={"line": line[:2], "section": "C"}).status_code \
        == 200


def test_bad_saves_change_nothing(client, project_copy):
    before = project_copy.read_text(encoding="utf-8")
    for body in ({"section": "", "line": [[0, 0], [1, 1]]}, {"section": "A", "line": [[0, 0]]},
                 {"line": [[0, 0], [1, 1]]}, {"section": "A\n", "line": "x"}):
        r = client.post("/api/save", json=body)
        assert 400 <= r.status_code < 500 and r.json()["error"]
    assert project_copy.read_text(encoding="utf-8") == before


def test_save_line_round_trip_with_tomlkit(tmp_path):
    p = tmp_path / "p.toml"
    p.write_text((SAMPLE / "project.toml").read_text(encoding="utf-8"), encoding="utf-8")
    for name in ("dem.tif", "geology.gpkg", "attitudes.csv"):
        (tmp_path / name).symlink_to(SAMPLE / name)
    save_line(p, "A", np.array([[604000.0, 5218000.0], [610000.0, 5214000.0]]))
    assert "# Section A: straight" in p.read_text(encoding="utf-8")


def test_build_from_the_page(client, project_copy):
    r = client.post("/api/build", json={"section": "B", "output": "page_out"})
    assert r.status_code == 200, r.text
    d = r.json()
    folder = project_copy.parent / "page_out" / "B"
    assert Path(d["folder"]) == folder and (folder / "report.html").is_file()
    assert "topography" in d["summary"]
    rep = client.get(d["report"])
    assert rep.status_code == 200 and "<html" in rep.text.lower()
    # never into a folder holding the inputs: section "area" built into ".." would
    # replace the project's own folder (named "area" here)
    assert client.post("/api/build", json={"section": "area", "output": ".."}).status_code \
        == 404
    line = [[604700.0, 5218800.0], [612100.0, 5213600.0]]
    assert client.post("/api/save", json={"section": "area", "line": line}).status_code == 200
    r = client.post("/api/build", json={"section": "area", "output": ".."})
    assert r.status_code == 422 and "input" in r.json()["error"]
    assert (project_copy.parent / "dem.tif").is_file()
    assert client.get("/api/report?section=nope").status_code == 404


def test_unknown_route_and_method(client):
    assert client.get("/api/nothing").status_code == 404
    assert client.get("/api/section").status_code == 405


# --- the command -----------------------------------------------------------------------------
def test_view_command_serves_and_stops_on_ctrl_c(project_copy):
    import signal
    import subprocess
    import sys
    import urllib.error
    import urllib.request

    env = dict(__import__("os").environ)
    env["PYTHONPATH"] = str(Path(__file__).resolve().parents[1])
    code = "from mapsection.cli.main import cli; cli()"
    proc = subprocess.Popen([sys.executable, "-c", code, "view",
                             str(project_copy), "--no-browser", "--port", "0"],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=env)
    try:
        url = proc.stdout.readline().strip()
        assert url.startswith("http://127.0.0.1:") and "?token=" in url
        for _ in range(300):  # the address is printed as the server starts
            try:
                with urllib.request.urlopen(url.replace("/?", "/api/project?"), timeout=30) as r:
                    assert json.loads(r.read())["sections"]
                break
            except urllib.error.URLError:
                __import__("time").sleep(0.1)
        else:
            pytest.fail("the server did not answer")
        proc.send_signal(signal.SIGINT)
        assert proc.wait(30) in (0, 1, 130, -signal.SIGINT)
    finally:
        if proc.poll() is None:
            proc.kill()
    assert "Traceback" not in proc.stderr.read()


def test_view_command_bad_project_is_one_line(tmp_path):
    from click.testing import CliRunner

    from mapsection.cli.main import cli

    r = CliRunner().invoke(cli, ["view", str(tmp_path / "none.toml"), "--no-browser"])
    assert r.exit_code == 2
    assert r.output.strip().startswith("mapsection: error:") and len(
        r.output.strip().splitlines()) == 1
