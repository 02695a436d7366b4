"""Members page: admins add members, change roles, deactivate; nobody else may."""

import pytest
from django.contrib.auth import get_user_model
from django.core.exceptions import ValidationError
from django.test import Client as HttpClient
from django.urls import reverse

from survey.models import AuditEvent, Member
from survey.services import members as member_services

User = get_user_model()
# Long, uncommon and unlike any name here: passes Django's default password validators.
GOOD_PASSWORD = "tidal-marsh-47-lantern"


def add(client, **data):
    values = {
        "username": "wren",
        "full_name": "Wren Fieldworker",
        "email": "wren@example.org",
        "role": "thermographer",
        "qualification": "Level 1 thermographer",
        "password": GOOD_PASSWORD,
    }
    return client.post(reverse("survey:members"), values | data)


def edit_url(member: Member) -> str:
    return reverse("survey:member_edit", args=[member.pk])


def messages_of(response) -> list[str]:
    return [str(m) for m in response.context["messages"]] if response.context else []


def test_it_lets_an_admin_add_a_member_who_can_then_sign_in(owner_client, org):
    """User and membership are created together; the audit log names them, not the password."""
    response = add(owner_client)
    assert response.status_code == 302 and response["Location"] == reverse("survey:members")
    member = Member.objects.get(user__username="wren")
    assert member.organization == org and member.role == "thermographer"
    assert member.display_name == "Wren Fieldworker"
    assert member.qualification == "Level 1 thermographer"
    assert HttpClient().login(username="wren", password=GOOD_PASSWORD)
    event = AuditEvent.objects.get(action="member.add", object_id=str(member.pk))
    assert event.organization == org and event.actor.username == "olivia"
    assert GOOD_PASSWORD not in str(event.detail)


def test_it_makes_up_a_temporary_password_and_shows_it_once(owner_client):
    """Without a password one is generated, shown on the answer (not cached), then never again."""
    response = add(owner_client, password="")
    assert response.status_code == 200
    password = response.context["password"]
    assert password and password in response.content.decode()
    assert "no-store" in response["Cache-Control"]
    assert HttpClient().login(username="wren", password=password)
    assert password not in owner_client.get(reverse("survey:members")).content.decode()


@pytest.mark.parametrize(
    ("data", "field", "words"),
    [
        ({"password": "password1"}, "password", "too common"),
        ({"password": "wren"}, "password", "too short"),
        ({"username": "theo"}, "username", "cannot be added"),
        ({"username": "no spaces please"}, "username", "valid username"),
        ({"email": "wren@"}, "email", "valid email"),
        ({"role": "superuser"}, "role", "valid choice"),
        ({"username": ""}, "username", "required"),
    ],
)
def test_it_rejects_bad_member_input_and_adds_nobody(
    owner_client, thermographer, data, field, words
):
    """A weak password, taken name, bad e-mail or role is a message on its field, never a 500."""
    users_before = User.objects.count()
    response = add(owner_client, **data)
    assert response.status_code == 200
    errors = " ".join(response.context["form"].errors.get(field, []))
    assert words in errors, response.context["form"].errors
    assert "nobody was added" in response.content.decode()
    assert User.objects.count() == users_before


def test_it_changes_a_role_and_qualification(owner_client, thermographer):
    """The role and qualification are saved and the change is audited with old and new."""
    response = owner_client.post(
        edit_url(thermographer), {"role": "reviewer", "qualification": "Level 2"}
    )
    assert response.status_code == 302
    thermographer.refresh_from_db()
    assert (thermographer.role, thermographer.qualification) == ("reviewer", "Level 2")
    event = AuditEvent.objects.get(action="member.update")
    assert event.detail["role"] == ["thermographer", "reviewer"]


def test_it_refuses_an_unknown_role_on_the_edit_page(owner_client, thermographer):
    """An invented role is a field message; the member is unchanged."""
    response = owner_client.post(edit_url(thermographer), {"role": "root", "qualification": ""})
    assert response.status_code == 200 and "valid choice" in response.content.decode()
    thermographer.refresh_from_db()
    assert thermographer.role == "thermographer"


def test_it_deactivates_a_member_and_ends_their_session(owner_client, thermographer):
    """A deactivated member is signed out at once and cannot sign in again until reactivated."""
    theirs = HttpClient()
    theirs.force_login(thermographer.user)
    assert theirs.get(reverse("survey:home")).status_code == 200
    response = owner_client.post(edit_url(thermographer), {"action": "deactivate"})
    assert response.status_code == 302
    thermographer.user.refresh_from_db()
    assert thermographer.user.is_active is False
    assert theirs.get(reverse("survey:home")).status_code == 302  # to sign in
    assert not HttpClient().login(username="theo", password="correct-horse-battery-staple")
    assert AuditEvent.objects.filter(action="member.deactivate").count() == 1

    owner_client.post(edit_url(thermographer), {"action": "reactivate"})
    assert HttpClient().login(username="theo", password="correct-horse-battery-staple")
    assert AuditEvent.objects.filter(action="member.reactivate").count() == 1


def test_it_refuses_to_let_an_admin_deactivate_or_demote_themselves(owner_client, owner):
    """Olivia cannot lock herself out: a clear message, and she stays an active admin."""
    response = owner_client.post(edit_url(owner), {"action": "deactivate"}, follow=True)
    assert any("cannot deactivate yourself" in m for m in messages_of(response))
    response = owner_client.post(edit_url(owner), {"role": "reviewer", "qualification": ""})
    assert response.status_code == 200 and "your own role" in response.content.decode()
    owner.refresh_from_db()
    owner.user.refresh_from_db()
    assert owner.role == "admin" and owner.user.is_active


def test_it_never_removes_the_last_active_admin(owner, reviewer):
    """Demoting or deactivating the only active admin is refused; with a second admin it works."""
    with pytest.raises(ValidationError, match="only active admin"):
        member_services.member_update(member=owner, actor=None, role="reviewer", qualification="")
    with pytest.raises(ValidationError, match="only active admin"):
        member_services.member_deactivate(member=owner, actor=None)
    owner.refresh_from_db()
    assert owner.role == "admin"
    member_services.member_update(member=reviewer, actor=owner.user, role="admin", qualification="")
    member_services.member_deactivate(member=owner, actor=reviewer.user)
    owner.user.refresh_from_db()
    assert owner.user.is_active is False


def test_it_lists_the_members_and_links_the_page_for_admins_only(
    owner_client, client, thermographer, outsider
):
    """Admins see the Members link and their own people; the other firm's never appear."""
    body = owner_client.get(reverse("survey:home")).content.decode()
    assert reverse("survey:members") in body
    body = owner_client.get(reverse("survey:members")).content.decode()
    assert "Theo Thermographer" in body and "Otto Outsider" not in body
    client.force_login(thermographer.user)
    assert reverse("survey:members") not in client.get(reverse("survey:home")).content.decode()


@pytest.mark.parametrize("persona", ["thermographer", "reviewer"])
def test_it_forbids_non_admins_to_manage_members(client, request, persona, thermographer):
    """Reviewers and thermographers get 403 on every members route and change nothing."""
    client.force_login(request.getfixturevalue(persona).user)
    assert client.get(reverse("survey:members")).status_code == 403
    assert add(client).status_code == 403
    assert client.get(edit_url(thermographer)).status_code == 403
    assert client.post(edit_url(thermographer), {"action": "deactivate"}).status_code == 403
    thermographer.user.refresh_from_db()
    assert thermographer.user.is_active and not User.objects.filter(username="wren").exists()


def test_it_answers_404_to_an_outsider_for_another_firms_member(outsider_client, thermographer):
    """Otto, admin of another firm, cannot see, edit or deactivate Northwind's Theo."""
    url = edit_url(thermographer)
    assert outsider_client.get(url).status_code == 404
    assert outsider_client.post(url, {"role": "admin", "qualification": "x"}).status_code == 404
    assert outsider_client.post(url, {"action": "deactivate"}).status_code == 404
    thermographer.refresh_from_db()
    thermographer.user.refresh_from_db()
    assert thermographer.role == "thermographer" and thermographer.user.is_active
    assert not AuditEvent.objects.filter(action__startswith="member.").exists()


@pytest.mark.parametrize("username", ["otto", "OTTO", "theo"])
def test_it_never_says_whether_a_user_name_exists_elsewhere(
    owner_client, thermographer, outsider, username
):
    """A name taken in another firm (or in any case) gets the same answer as one taken here,
    and the answer does not say it exists."""
    response = add(owner_client, username=username)
    errors = response.context["form"].errors["username"]
    assert errors == ["This user name cannot be added. Choose another one."]
    assert "exists" not in response.content.decode()
