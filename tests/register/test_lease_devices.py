"""One walk per job across devices: laptops that sync with a company register take the
job's lease there when they can reach it; a second walk elsewhere is refused naming the
device, the person and since when; an expired lease is taken over only when confirmed;
offline, the walk goes on and says so. Reference: the lease row on the server, read back."""

from __future__ import annotations

import pytest

from commission.checklist import load
from commission.checks import CHECKS
from commission.errors import UserError
from commission.register import Register
from commission.register.lease import Lease
from commission.register.postgres import PostgresRegister
from commission.register.sync import sync
from conftest import CHECKLIST


@pytest.fixture
def laptops(tmp_path, pg_url):
    with Register(tmp_path / "a.sqlite3") as a, Register(tmp_path / "b.sqlite3") as b:
        job = a.create_job(load(CHECKLIST, checks=CHECKS), {"site": "Larch House"})
        with PostgresRegister(pg_url) as office:
            sync(a, office)
            office.assign(office.find_job(job.uuid), office.role())
            sync(b, office)
        for laptop in (a, b):
            laptop.set_setting("company_register", pg_url)
        yield a, b, job


def test_second_walk_on_another_laptop_is_refused(laptops, pg_url, cli, tmp_path):
    a, b, job = laptops
    with a.walk_lock(a.find_job(job.uuid)):
        with pytest.raises(UserError) as err:
            b.walk_lock(b.find_job(job.uuid)).__enter__()
        text = str(err.value)
        assert a.device_id() in text and "since 20" in text and "tester" in text
        answers = tmp_path / "x.yaml"
        answers.write_text("supply.voltage: 231 V\n", encoding="utf-8")
        refused = cli("walk", job.short_id, "--answers", answers, "--register",
                      tmp_path / "b.sqlite3")
        assert refused.exit_code == 2 and a.device_id() in refused.stderr
    with b.walk_lock(b.find_job(job.uuid)):  # released: now b may walk
        with PostgresRegister(pg_url) as office:
            held = office._x("SELECT device_id FROM leases").fetchall()
        assert held == [(b.device_id(),)]


def test_expired_lease_taken_over_only_when_confirmed(laptops, pg_url):
    a, b, job = laptops
    with PostgresRegister(pg_url) as office:  # a laptop that died in a loft
        Lease(office, office.find_job(job.uuid), hours=-1, device=a.device_id()).__enter__()
    with pytest.raises(UserError, match="--take-over"):
        b.walk_lock(b.find_job(job.uuid)).__enter__()
    with b.walk_lock(b.find_job(job.uuid), take_over=True) as held:
        assert held.lease is not None and held.lease.held


def test_offline_walk_goes_on_and_says_so(laptops, tmp_path):
    a, _b, job = laptops
    a.set_setting("company_register", f"postgresql://x@/db?host={tmp_path / 'nowhere'}")
    with a.walk_lock(a.find_job(job.uuid)) as held:
        assert "cannot be reached" in held.note and "offline" in held.note
