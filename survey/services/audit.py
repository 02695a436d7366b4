from django.contrib.auth.models import AbstractBaseUser

from survey.models import AuditEvent, Organization


def audit_record(
    *,
    organization: Organization | None,
    actor: AbstractBaseUser | None,
    action: str,
    obj: object | None = None,
    object_type: str = "",
    detail: dict | None = None,
) -> AuditEvent:
    """Write one audit line: who did `action` to which object."""
    if obj is not None and not object_type:
        object_type = type(obj).__name__
    event = AuditEvent(
        organization=organization,
        actor=actor if actor is not None and actor.is_authenticated else None,
        action=action,
        object_type=object_type,
        object_id=str(getattr(obj, "pk", "") or ""),
        detail=detail or {},
    )
    # Events outside any organization (a sign-in attempt for an unknown name) are allowed.
    event.full_clean(exclude=["organization"] if organization is None else None)
    event.save()
    return event
