"""The load run (``make load``, ``manage.py load_run``): gunicorn (gthread workers) serving
fleetfuel on 127.0.0.1 and wrk, a separate process, driving it: the floor page (floor.py), the
due list, a unit page and a task save (htmx POST with the CSRF token), each at each number of
connections for a fixed time. Requests per second, p50 and p99 latency, errors (socket errors,
time-outs and answers other than 200).

Bounded: loopback only, at most MAX_SECONDS a run and MAX_CONNECTIONS connections; gunicorn
is stopped at the end whatever happens. It needs a synthetic fleet (synth_fleet or benchmark).
"""

from __future__ import annotations

import json
import os
import shutil
import subprocess
import sys
import time
import urllib.request
from pathlib import Path
from typing import Any
from urllib.parse import quote

from django.conf import settings
from django.contrib.auth.models import User
from django.db import connection
from django.test import Client, override_settings
from django.urls import reverse

from fleetfuel.fleet.models import Unit

from .bench_pages import drain_work_order
from .floor import FLOOR_PATH
from .synth import MANAGER

HOST = "127.0.0.1"
MAX_SECONDS, MAX_CONNECTIONS = 120, 256
LUA = Path(__file__).parent / "wrk" / "session.lua"
TASKS = 16  # task saves rotate over this many work orders


def database_url() -> str:
    """The database this process uses (the test database under pytest), as DATABASE_URL."""
    s = connection.settings_dict
    if connection.vendor == "sqlite":
        return f"sqlite:///{s['NAME']}"
    who = quote(s["USER"] or "") + (f":{quote(s['PASSWORD'])}" if s["PASSWORD"] else "")
    return f"postgres://{who}@{s['HOST'] or HOST}:{s['PORT'] or 5432}/{s['NAME']}"


def signed_in(site_ids: list[int]) -> dict[str, Any]:
    """A session of the synthetic manager, its CSRF token, and the paths to drive."""
    client = Client()
    client.force_login(User.objects.get(username=MANAGER))
    with override_settings(ALLOWED_HOSTS=["*"], SECURE_SSL_REDIRECT=False):
        client.get(reverse("pages:due_list"), secure=True)
    session = client.cookies[settings.SESSION_COOKIE_NAME].value
    csrf = client.cookies[settings.CSRF_COOKIE_NAME].value
    unit = Unit.objects.filter(site_id__in=site_ids).order_by("pk").first()
    assert unit is not None
    tasks = [drain_work_order(site_ids).tasks.get().pk for _ in range(TASKS)]
    return {
        "cookie": f"{settings.SESSION_COOKIE_NAME}={session}; {settings.CSRF_COOKIE_NAME}={csrf}",
        "csrf": csrf,
        "targets": {
            "floor_page": [FLOOR_PATH],
            "due_list": [reverse("pages:due_list")],
            "unit_page": [reverse("pages:unit_detail", args=[unit.pk])],
            "task_save": [reverse("workorders:task_save", args=[pk]) for pk in tasks],
        },
    }


def server_start(*, port: int, workers: int, threads: int) -> subprocess.Popen[bytes]:
    env = os.environ | {
        "DATABASE_URL": database_url(),
        "ALLOWED_HOSTS": HOST,
        "SECURE_SSL_REDIRECT": "false",
    }
    command = [sys.executable, "-m", "gunicorn", "fleetfuel.demo.load_wsgi:application",
               "--worker-class", "gthread", "--workers", str(workers), "--threads", str(threads),
               "--bind", f"{HOST}:{port}", "--log-level", "warning", "--timeout", "60"]  # fmt: skip
    server = subprocess.Popen(command, cwd=settings.BASE_DIR, env=env)
    deadline = time.monotonic() + 60
    while time.monotonic() < deadline:
        try:
            with urllib.request.urlopen(f"http://{HOST}:{port}{FLOOR_PATH}", timeout=2):
                return server
        except OSError:
            if server.poll() is not None:
                raise RuntimeError("gunicorn stopped at start") from None
            time.sleep(0.5)
    server.terminate()
    raise RuntimeError("gunicorn did not answer within 60 s")


def wrk(*, port: int, paths: list[str], connections: int, seconds: int, session: dict[str, Any],
        body: str | None) -> dict[str, Any]:  # fmt: skip
    env = os.environ | {"FLEETFUEL_COOKIE": session["cookie"], "FLEETFUEL_CSRF": session["csrf"],
                        "FLEETFUEL_PATHS": " ".join(paths)}  # fmt: skip
    if body is not None:
        env["FLEETFUEL_BODY"] = body
    command = ["wrk", f"-t{min(2, connections)}", f"-c{connections}", f"-d{seconds}s",
               "--timeout", "5s", "-s", str(LUA), f"http://{HOST}:{port}{paths[0]}"]  # fmt: skip
    done = subprocess.run(command, env=env, capture_output=True, text=True, timeout=seconds + 60)
    line = next((x for x in done.stdout.splitlines() if x.startswith("WRKJSON ")), None)
    if line is None:
        raise RuntimeError(f"wrk gave no summary: {done.stdout} {done.stderr}")
    raw = json.loads(line.removeprefix("WRKJSON "))
    errors = sum(raw[k] for k in ("connect", "read", "write", "timeout", "not_200"))
    return {
        "connections": connections,
        "seconds": seconds,
        "requests": raw["requests"],
        "rps": round(raw["requests"] / (raw["duration_us"] / 1e6), 1),
        "p50_ms": round(raw["p50_us"] / 1000, 1),
        "p99_ms": round(raw["p99_us"] / 1000, 1),
        "errors": errors,
    }


def load_run(*, site_ids: list[int], connections: list[int], seconds: int, port: int,
             workers: int, threads: int) -> dict[str, Any]:  # fmt: skip
    if shutil.which("wrk") is None:
        raise RuntimeError("wrk is not installed (Debian: apt-get install wrk)")
    if not 1 <= seconds <= MAX_SECONDS or not all(1 <= c <= MAX_CONNECTIONS for c in connections):
        raise ValueError(f"At most {MAX_SECONDS} s and {MAX_CONNECTIONS} connections a run.")
    session = signed_in(site_ids)
    server = server_start(port=port, workers=workers, threads=threads)
    runs: dict[str, list[dict[str, Any]]] = {}
    try:
        for name, paths in session["targets"].items():
            body = "water_ml=12&appearance=clear" if name == "task_save" else None
            runs[name] = [
                wrk(
                    port=port,
                    paths=paths,
                    connections=c,
                    seconds=seconds,
                    session=session,
                    body=body,
                )  # fmt: skip
                for c in connections
            ]
    finally:
        server.terminate()
        server.wait(timeout=30)
    return {"server": f"gunicorn gthread, {workers} workers x {threads} threads", "runs": runs}
