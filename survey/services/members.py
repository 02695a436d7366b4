"""Admins manage the members of their organization: add, change role, deactivate.

A member is a Django user plus a Member row; both are written in one transaction. Members
are never deleted (their names stay on surveys, findings and the audit log): deactivating
one sets `user.is_active = False`, which ends their sessions and stops their sign-in. An
organization always keeps at least one active admin.
"""

import secrets

from django.contrib.auth import get_user_model
from django.contrib.auth.models import AbstractBaseUser
from django.contrib.auth.password_validation import validate_password
from django.core.exceptions import ValidationError
from django.db import IntegrityError, transaction

from survey.models import Member, Organization
from survey.services.audit import audit_record

# No 0/O, 1/l/I: a temporary password is read aloud or copied from a screen.
PASSWORD_ALPHABET = "abcdefghijkmnpqrstuvwxyzABCDEFGHJKLMNPQRSTUVWXYZ23456789"
PASSWORD_GROUPS = 3
PASSWORD_GROUP_LENGTH = 5
CANNOT_ADD = "This user name cannot be added. Choose another one."


def temporary_password() -> str:
    """A random password of three groups of five characters (about 87 bits)."""
    groups = (
        "".join(secrets.choice(PASSWORD_ALPHABET) for _ in range(PASSWORD_GROUP_LENGTH))
        for _ in range(PASSWORD_GROUPS)
    )
    return "-".join(groups)


def _split_name(full_name: str) -> tuple[str, str]:
    first, _, last = " ".join(full_name.split()).partition(" ")
    return first, last


def _active_admins(organization: Organization):
    return Member.objects.select_for_update().filter(
        organization=organization, role=Member.Role.ADMIN, user__is_active=True
    )


def _check_keeps_an_admin(member: Member, *, action: str) -> None:
    others = _active_admins(member.organization).exclude(pk=member.pk)
    if member.is_admin and member.user.is_active and not others.exists():
        raise ValidationError(
            f"{member.display_name} is the organization's only active admin: make another "
            f"member admin before you {action}."
        )


@transaction.atomic
def member_add(
    *,
    organization: Organization,
    actor: AbstractBaseUser | None,
    username: str,
    full_name: str = "",
    email: str = "",
    role: str = Member.Role.THERMOGRAPHER,
    qualification: str = "",
    password: str | None = None,
) -> tuple[Member, str | None]:
    """Create a user and their membership; returns (member, generated password or None).

    Without `password` a temporary one is generated and returned so it can be shown once.
    Raises ValidationError (nothing written) for a taken or invalid user name, a bad e-mail
    address, an unknown role or a password Django's validators refuse.
    """
    generated = None if password else temporary_password()
    first_name, last_name = _split_name(full_name)
    username = username.strip()
    User = get_user_model()
    # Usernames are unique across every organization: say only that this one cannot be
    # used, never whether someone (perhaps of another firm) already has it.
    if User.objects.filter(username__iexact=username).exists():
        raise ValidationError({"username": CANNOT_ADD})
    user = User(username=username, first_name=first_name, last_name=last_name, email=email)
    user.full_clean(exclude=["password"], validate_unique=False)
    try:
        validate_password(password or generated, user=user)
    except ValidationError as error:
        raise ValidationError({"password": error.messages}) from None
    user.set_password(password or generated)
    try:
        with transaction.atomic():
            user.save()
    except IntegrityError:  # the same name added a moment ago by another request
        raise ValidationError({"username": CANNOT_ADD}) from None
    member = Member(user=user, organization=organization, role=role, qualification=qualification)
    member.full_clean()
    member.save()
    audit_record(
        organization=organization,
        actor=actor,
        action="member.add",
        obj=member,
        detail={"username": user.username, "role": role},
    )
    return member, generated


@transaction.atomic
def member_update(
    *, member: Member, actor: AbstractBaseUser | None, role: str, qualification: str
) -> Member:
    """Change a member's role and the qualification printed on reports."""
    changed = {}
    if role != member.role:
        if actor is not None and member.user_id == actor.pk:
            raise ValidationError({"role": "You cannot change your own role; ask another admin."})
        if role != Member.Role.ADMIN:
            _check_keeps_an_admin(member, action="change this role")
        changed["role"] = [member.role, role]
    if qualification != member.qualification:
        changed["qualification"] = [member.qualification, qualification]
    member.role = role
    member.qualification = qualification
    member.full_clean()
    member.save(update_fields=["role", "qualification"])
    if changed:
        audit_record(
            organization=member.organization,
            actor=actor,
            action="member.update",
            obj=member,
            detail=changed,
        )
    return member


@transaction.atomic
def member_deactivate(*, member: Member, actor: AbstractBaseUser | None) -> Member:
    """Stop a member signing in; their work stays attributed to them."""
    if actor is not None and member.user_id == actor.pk:
        raise ValidationError("You cannot deactivate yourself; ask another admin.")
    _check_keeps_an_admin(member, action="deactivate them")
    if member.user.is_active:
        member.user.is_active = False
        member.user.save(update_fields=["is_active"])
        audit_record(
            organization=member.organization,
            actor=actor,
            action="member.deactivate",
            obj=member,
            detail={"username": member.user.username},
        )
    return member


@transaction.atomic
def member_reactivate(*, member: Member, actor: AbstractBaseUser | None) -> Member:
    """Let a deactivated member sign in again (with their old password)."""
    if not member.user.is_active:
        member.user.is_active = True
        member.user.save(update_fields=["is_active"])
        audit_record(
            organization=member.organization,
            actor=actor,
            action="member.reactivate",
            obj=member,
            detail={"username": member.user.username},
        )
    return member


def member_update_preferences(
    *,
    member: Member,
    temperature_unit: str,
    speed_unit: str | None = None,
    length_unit: str | None = None,
) -> Member:
    member.temperature_unit = temperature_unit
    if speed_unit is not None:
        member.speed_unit = speed_unit
    if length_unit is not None:
        member.length_unit = length_unit
    member.full_clean()
    member.save(update_fields=["temperature_unit", "speed_unit", "length_unit"])
    return member


def organization_update_settings(
    *, organization: Organization, user: AbstractBaseUser | None, allow_self_review: bool
) -> Organization:
    """The organization's own rules (an admin's): whether a thermographer may issue their
    own survey's report."""
    organization.allow_self_review = bool(allow_self_review)
    organization.full_clean()
    organization.save(update_fields=["allow_self_review"])
    audit_record(
        organization=organization,
        actor=user,
        action="organization_settings",
        obj=organization,
        detail={"allow_self_review": organization.allow_self_review},
    )
    return organization
