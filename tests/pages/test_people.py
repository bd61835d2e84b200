"""People: an office administrator adds, disables and re-roles technicians and managers and
revokes a lost phone's token from the office pages, each change on the audit trail; no one
else can, and a disabled person's token and session stop working at once."""

from __future__ import annotations

import pytest
from django.contrib.auth.models import Group, User
from django.contrib.contenttypes.models import ContentType
from django.http import HttpRequest
from django.test import Client
from django.urls import reverse
from rest_framework.authtoken.models import Token

from fleet.choices import OFFICE_ADMIN_GROUP
from fleet.models import AuditEntry
from fleet.reach import roles_of
from tests.factories import SiteFactory, UserFactory, VisitFactory

from .conftest import signed_in

pytestmark = pytest.mark.django_db

PASSWORD = "cold-chain-ledger-77"


@pytest.fixture
def admin_user(office_user) -> User:
    office_user.groups.add(Group.objects.get(name=OFFICE_ADMIN_GROUP))
    return office_user


@pytest.fixture
def admin(admin_user) -> Client:
    return signed_in(admin_user)


def _trail(user: User) -> list[AuditEntry]:
    kind = ContentType.objects.get_for_model(User)
    return list(AuditEntry.objects.filter(record_type=kind, record_id=user.pk).order_by("id"))


def _new(**extra) -> dict:
    return {
        "username": "new.tech",
        "first_name": "Noor",
        "last_name": "Haddad",
        "email": "noor@example.invalid",
        "password1": PASSWORD,
        "password2": PASSWORD,
        "roles": ["technician"],
        **extra,
    }


def _change(user: User, **extra) -> dict:
    return {
        "first_name": user.first_name,
        "last_name": user.last_name,
        "email": user.email or "someone@example.invalid",
        "is_active": "on",
        "roles": ["technician"],
        **extra,
    }


def _api(token: Token, path: str = "/api/v1/visits/") -> int:
    return Client().get(path, HTTP_AUTHORIZATION=f"Token {token.key}").status_code


def test_an_office_administrator_adds_a_technician_who_may_sign_in(admin, admin_user):
    """The new technician is active, in the technician group, signs in with the password
    typed, and the trail says who added them, without the password."""
    response = admin.post(reverse("fleet:person-create"), _new())
    assert response.status_code == 302
    person = User.objects.get(username="new.tech")
    assert person.is_active
    assert roles_of(person).names == {"technician"}
    # The sign-in lockout counts per request, so the password sign-in is given one.
    assert Client().login(request=HttpRequest(), username="new.tech", password=PASSWORD)
    (entry,) = _trail(person)
    assert entry.action == "created"
    assert entry.actor == admin_user
    assert entry.changes["roles"] == [None, ["technician"]]
    assert "password" not in str(entry.changes)
    listing = admin.get(reverse("fleet:people")).content.decode()
    assert "Noor Haddad" in listing


def test_a_new_manager_reaches_the_sites_ticked(admin):
    """A manager added with a site reaches that site and no other."""
    granted, other = SiteFactory(name="Granted"), SiteFactory(name="Other")
    response = admin.post(
        reverse("fleet:person-create"),
        _new(username="new.boss", roles=["manager"], sites=[granted.pk]),
    )
    assert response.status_code == 302
    boss = signed_in(User.objects.get(username="new.boss"))
    assert boss.get(reverse("fleet:site", args=[granted.pk])).status_code == 200
    assert boss.get(reverse("fleet:site", args=[other.pk])).status_code == 404


@pytest.mark.parametrize(
    ("body", "field"),
    [
        ({"username": "TECH1"}, "username"),  # taken by tech1, whatever the case
        ({"password2": "something-else-42"}, "password2"),
        ({"password1": "12345678", "password2": "12345678"}, "password2"),
        ({"roles": []}, "roles"),
        ({"roles": ["office"]}, "roles"),
        ({"email": "not an address"}, "email"),
        ({"sites": ["SITE"]}, "sites"),  # sites for a technician only
    ],
    ids=["taken", "mismatch", "weak", "no-role", "office", "email", "sites-without-manager"],
)
def test_it_refuses_a_bad_new_person_beside_the_field(admin, technician, body, field):
    """A bad field is a 400 with the error beside that field, and no one is added."""
    site = SiteFactory()
    body = {
        k: [site.pk if x == "SITE" else x for x in v] if k == "sites" else v
        for k, v in body.items()
    }
    before = User.objects.count()
    response = admin.post(reverse("fleet:person-create"), _new(**body))
    assert response.status_code == 400
    assert field in response.context["form"].errors
    assert f'id="id_{field}_errors"' in response.content.decode()
    assert User.objects.count() == before


def test_re_roling_a_technician_as_a_manager_moves_their_reach(admin, admin_user, technician):
    """Technician to manager of one site: the visits go out of reach, the site comes in;
    the trail keeps the roles and sites before and after."""
    site = SiteFactory(name="Granted")
    done = VisitFactory(status="cancelled", technicians=[technician])
    response = admin.post(
        reverse("fleet:person", args=[technician.pk]),
        _change(technician, roles=["manager"], sites=[site.pk]),
    )
    assert response.status_code == 302
    fresh = User.objects.get(pk=technician.pk)
    assert roles_of(fresh).names == {"manager"}
    client = signed_in(fresh)
    assert client.get(reverse("fleet:visit", args=[done.pk])).status_code == 404
    assert client.get(reverse("fleet:site", args=[site.pk])).status_code == 200
    (entry,) = _trail(technician)
    assert entry.actor == admin_user
    assert entry.changes["roles"] == [["technician"], ["manager"]]
    assert entry.changes["managed_sites"] == [[], [site.pk]]


def test_it_keeps_the_technician_role_while_a_visit_is_still_to_be_done(admin, technician):
    """Taking the role from a technician still assigned to a scheduled visit is refused,
    naming the visit; nothing changes and nothing is recorded."""
    visit = VisitFactory(status="scheduled", technicians=[technician])
    response = admin.post(
        reverse("fleet:person", args=[technician.pk]), _change(technician, roles=["manager"])
    )
    assert response.status_code == 400
    assert visit.reference in response.content.decode()
    assert roles_of(User.objects.get(pk=technician.pk)).names == {"technician"}
    assert _trail(technician) == []


def test_disabling_stops_the_token_and_the_session_at_once(admin, technician, office):
    """Disabled, the technician's phone token answers 401, their open session is signed
    out, the trail records both, and their assigned visit stays on the office's week."""
    token = Token.objects.create(user=technician)
    session = signed_in(technician)
    visit = VisitFactory(status="scheduled", technicians=[technician])
    assert _api(token) == 200
    response = admin.post(
        reverse("fleet:person", args=[technician.pk]), _change(technician, is_active="")
    )
    assert response.status_code == 302
    assert _api(token) == 401
    assert not Token.objects.filter(user=technician).exists()
    assert session.get(reverse("fleet:schedule")).status_code == 302  # to sign in
    (entry,) = _trail(technician)
    assert entry.changes["is_active"] == [True, False]
    assert entry.changes["api_token"] == [True, False]
    assert visit.reference in office.get(reverse("fleet:schedule")).content.decode()


def test_a_disabled_persons_old_token_stays_refused_without_a_revoke(technician):
    """Even a token left in place answers 401 once its user may not sign in."""
    token = Token.objects.create(user=technician)
    User.objects.filter(pk=technician.pk).update(is_active=False)
    assert _api(token) == 401


def test_revoking_a_lost_phones_token(admin, admin_user, technician):
    """Revoked, the token answers 401 and the trail says so; the person may still sign in;
    a second revoke finds none and records nothing."""
    token = Token.objects.create(user=technician)
    url = reverse("fleet:person-revoke-token", args=[technician.pk])
    assert admin.post(url).status_code == 302
    assert _api(token) == 401
    assert User.objects.get(pk=technician.pk).is_active
    (entry,) = _trail(technician)
    assert entry.note == "API token revoked"
    assert entry.actor == admin_user
    admin.post(url)
    assert len(_trail(technician)) == 1
    page = admin.get(reverse("fleet:person", args=[technician.pk])).content.decode()
    assert "API token revoked" in page


@pytest.fixture
def plain_office(db) -> User:
    return UserFactory(username="office-not-admin", role="office")


@pytest.mark.parametrize("who", ["technician", "manager", "plain_office"])
def test_no_one_but_an_office_administrator_manages_people(request, who, technician):
    """A technician, a manager and an office user outside the administrators' group get 404
    on every people page and action, and nothing changes."""
    client = signed_in(request.getfixturevalue(who))
    token = Token.objects.create(user=technician)
    target = technician.pk
    for url in (reverse("fleet:people"), reverse("fleet:person-create")):
        assert client.get(url).status_code == 404
    assert client.post(reverse("fleet:person-create"), _new()).status_code == 404
    edit = reverse("fleet:person", args=[target])
    assert client.get(edit).status_code == 404
    assert client.post(edit, _change(technician, is_active="")).status_code == 404
    revoke = reverse("fleet:person-revoke-token", args=[target])
    assert client.post(revoke).status_code == 404
    assert not User.objects.filter(username="new.tech").exists()
    assert User.objects.get(pk=target).is_active
    assert Token.objects.filter(pk=token.pk).exists()
    assert _trail(technician) == []
    assert 'href="/people/"' not in client.get(reverse("fleet:sites")).content.decode()


def test_strangers_are_sent_to_sign_in(client):
    response = client.get(reverse("fleet:people"))
    assert response.status_code == 302
    assert response["Location"].startswith(reverse("login"))


def test_office_users_and_superusers_are_not_managed_here(admin, admin_user, plain_office):
    """The office, its administrators and superusers are a superuser's to manage: not
    listed, and 404 to change or revoke."""
    root = User.objects.create_superuser("root", password="x")
    listing = admin.get(reverse("fleet:people")).content.decode()
    for user in (admin_user, plain_office, root):
        assert reverse("fleet:person", args=[user.pk]) not in listing
        assert admin.get(reverse("fleet:person", args=[user.pk])).status_code == 404
        url = reverse("fleet:person-revoke-token", args=[user.pk])
        assert admin.post(url).status_code == 404


def test_the_forms_need_the_csrf_token(admin_user, technician):
    """Without the CSRF token a post is refused (403) and changes nothing."""
    client = Client(enforce_csrf_checks=True)
    client.force_login(admin_user)
    assert client.post(reverse("fleet:person-create"), _new()).status_code == 403
    url = reverse("fleet:person", args=[technician.pk])
    assert client.post(url, _change(technician, is_active="")).status_code == 403
    assert not User.objects.filter(username="new.tech").exists()
    assert User.objects.get(pk=technician.pk).is_active
    assert 'name="csrfmiddlewaretoken"' in client.get(url).content.decode()


def test_the_menu_links_people_for_administrators(admin):
    html = admin.get(reverse("fleet:sites")).content.decode()
    assert 'href="/people/"' in html


def test_a_superuser_is_an_administrator_and_the_group_alone_is_not(technician):
    """A superuser manages people; the administrators' group without the office role gives
    nothing, and it widens no reach."""
    root = User.objects.create_superuser("root", password="x")
    assert roles_of(root).manages_people
    technician.groups.add(Group.objects.get(name=OFFICE_ADMIN_GROUP))
    fresh = User.objects.get(pk=technician.pk)
    assert not roles_of(fresh).manages_people
    assert roles_of(fresh).names == {"technician"}
    assert signed_in(fresh).get(reverse("fleet:people")).status_code == 404


@pytest.mark.parametrize("extra", [1, 6])
def test_the_people_list_costs_the_same_queries_for_few_and_many(
    admin, extra, django_assert_max_num_queries
):
    """Session, user, roles, the nav's two counts, the people with their groups and
    sites: the same for one person as for many."""
    for i in range(extra):
        person = UserFactory(username=f"p{i}", role="manager")
        SiteFactory().managers.add(person)
        Token.objects.create(user=person)
    with django_assert_max_num_queries(8):
        response = admin.get(reverse("fleet:people"))
    assert response.status_code == 200
