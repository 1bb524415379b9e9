"""Accounts, roles, sign-in and the permission check every write path makes.

Roles (``ROLES``): a *technician* analyses and saves shifts; a *supervisor* also
freezes baselines and signs reviews; an *administrator* manages accounts and, unless
the store setting :meth:`UsersRoom.allow_administrator_signing` is on, cannot sign.

Passwords are hashed with Argon2id (argon2-cffi's ``PasswordHasher`` defaults; the
encoded hash carries its own salt and parameters) and never stored, logged or put in
an audit event in clear. After ``MAX_FAILURES`` consecutive wrong passwords an account
is locked for ``LOCKOUT_MINUTES``; an administrator can unlock it sooner.

*Single-user mode*: while the store has no account at all, nobody signs in; every
write is attributed to ``SINGLE_USER_LABEL`` with the operating-system login name,
and a review is recorded but is not an electronic signature. The first account (made
with ``python -m qcnorm users add``) switches the store to *team mode* for good: from
then on every write names a signed-in account with the right role.

References
----------
Biryukov, A., Dinu, D., Khovratovich, D., Josefsson, S. (2021). Argon2 Memory-Hard
Function for Password Hashing and Proof-of-Work Applications. RFC 9106.
"""

from __future__ import annotations

import re
from collections.abc import Mapping
from datetime import datetime, timedelta
from typing import Any

import sqlalchemy as sa
from argon2 import PasswordHasher
from argon2.exceptions import InvalidHashError, VerificationError, VerifyMismatchError
from sqlalchemy.engine import Connection

from ..errors import AuthError, ConfigError, PermissionDenied, StoreError
from . import _common, chain
from ._common import _now, _required_text, os_login
from .audit import AuditRoom
from .records import ROLES, SINGLE_USER_LABEL, User
from .schema import audit_t, user_t

__all__ = ["PERMISSIONS", "MAX_FAILURES", "LOCKOUT_MINUTES", "MIN_PASSWORD_LENGTH", "may", "UsersRoom"]

#: duty -> (roles that may do it, what it is in words). Checked on every write path.
PERMISSIONS: dict[str, tuple[tuple[str, ...], str]] = {
    "save_characteristic": (("technician", "supervisor"), "save a characteristic"),
    "save_analysis": (("technician", "supervisor"), "save an analysis"),
    "save_baseline": (("supervisor",), "freeze a baseline"),
    "sign_review": (("supervisor",), "sign a review (approve / hold / reject)"),
    "manage_accounts": (("administrator",), "manage accounts"),
    "change_settings": (("administrator",), "change store settings"),
    "read_audit": (("supervisor", "administrator"), "read the audit trail"),
}
MAX_FAILURES = 5
LOCKOUT_MINUTES = 15
MIN_PASSWORD_LENGTH = 8
_USERNAME = re.compile(r"^[a-z0-9][a-z0-9._@-]{1,99}$")
_HASHER = PasswordHasher()  # Argon2id (RFC 9106) with argon2-cffi's defaults
_DUMMY_HASH: list[str] = []


def may(user: User | None, duty: str, *, administrator_may_sign: bool = False) -> bool:
    """True when ``user`` (an active account) may do ``duty`` (a key of ``PERMISSIONS``)."""
    if duty not in PERMISSIONS:
        raise ConfigError(f"Unknown duty {duty!r}. Known: {', '.join(PERMISSIONS)}.")
    if user is None or not user.active:
        return False
    roles = PERMISSIONS[duty][0]
    if duty == "sign_review" and administrator_may_sign:
        roles = (*roles, "administrator")
    return user.role in roles


def _state(row: Mapping[str, Any]) -> dict[str, Any]:
    return {"id": row["id"], "username": row["username"], "full_name": row["full_name"],
            "role": row["role"], "active": bool(row["active"])}


def _user(row: Mapping[str, Any]) -> User:
    return User(id=int(row["id"]), username=row["username"], full_name=row["full_name"], role=row["role"],
                active=bool(row["active"]))


def _a_or_an(words: str) -> str:
    return ("an " if words[:1] in "aeiou" else "a ") + words


class UsersRoom(AuditRoom):
    """Accounts and the acting-user check."""

    # ---- helpers
    @staticmethod
    def _username(value: Any, func: str) -> str:
        if not isinstance(value, str) or not _USERNAME.match(value.strip().lower()):
            raise ConfigError(
                f"The 'username' parameter of {func} must be 2–100 characters: letters, digits, '.', '_', '-' or '@', "
                f"starting with a letter or digit. Got {value!r} instead."
            )
        return value.strip().lower()

    @staticmethod
    def _role(value: Any, func: str) -> str:
        role = value.strip().lower() if isinstance(value, str) else value
        if role not in ROLES:
            raise ConfigError(f"The 'role' parameter of {func} must be one of {', '.join(ROLES)}. Got {value!r} instead.")
        return role

    @staticmethod
    def _new_password(password: Any, username: str, func: str) -> str:
        if not isinstance(password, str) or len(password) < MIN_PASSWORD_LENGTH:
            raise ConfigError(f"The password given to {func} must be at least {MIN_PASSWORD_LENGTH} characters. Choose a longer one.")
        if password.strip().lower() == username:
            raise ConfigError(f"The password given to {func} may not be the username. Choose another one.")
        return password

    def _user_row(self, conn: Connection, username: str) -> Mapping[str, Any] | None:
        return conn.execute(sa.select(user_t).where(user_t.c.username == username)).mappings().first()

    def _user_row_or_raise(self, conn: Connection, username: Any, func: str) -> Mapping[str, Any]:
        name = self._username(username, func)
        row = self._user_row(conn, name)
        if row is None:
            raise StoreError(f"No account named {name!r} in the history database {self.url}. Check the spelling (python -m qcnorm users list).")
        return row

    def _team_mode(self, conn: Connection) -> bool:
        return conn.execute(sa.select(sa.func.count()).select_from(user_t)).scalar_one() > 0

    def _reseal_user(self, conn: Connection, user_id: int, event: tuple[int, int, str]) -> None:
        conn.execute(user_t.update().where(user_t.c.id == user_id).values(last_event_seq=event[1]))
        row = conn.execute(sa.select(user_t).where(user_t.c.id == user_id)).mappings().one()
        conn.execute(user_t.update().where(user_t.c.id == user_id).values(record_hash=chain.user_hash(row, event[2])))

    def _admin_may_sign(self, conn: Connection) -> bool:
        row = conn.execute(
            sa.select(audit_t.c.state_json).where(audit_t.c.action == "setting_changed",
                                                  audit_t.c.target == "administrator_may_sign")
            .order_by(audit_t.c.chain_seq.desc()).limit(1)
        ).first()
        return bool(row is not None and '"value": true' in (row.state_json or ""))

    def _who(self, conn: Connection, actor: Any, duty: str, func: str) -> dict[str, Any]:
        """The acting account as a dict (id, username, full_name, role, label), role checked.

        Single-user mode (no accounts): the login name, labelled as such. Team mode:
        ``actor`` must be a :class:`User` whose account is active and whose *stored* role
        may do ``duty``; otherwise :class:`PermissionDenied` says who may.
        """
        roles, words = PERMISSIONS[duty]
        if duty == "sign_review" and self._admin_may_sign(conn):
            roles = (*roles, "administrator")
        allowed = " or ".join(roles)
        if not self._team_mode(conn):
            if actor is not None and not isinstance(actor, User):
                raise ConfigError(f"The acting user given to {func} must be a qcnorm.store.User. Got {type(actor).__name__} instead.")
            return {"id": None, "username": os_login(), "full_name": SINGLE_USER_LABEL, "role": None,
                    "label": "single-user mode"}
        if actor is None:
            raise PermissionDenied(f"Sign in first: to {words} you must be signed in as {_a_or_an(allowed)}.")
        if not isinstance(actor, User):
            raise ConfigError(f"The acting user given to {func} must be a qcnorm.store.User (from authenticate). Got {type(actor).__name__} instead.")
        row = conn.execute(sa.select(user_t).where(user_t.c.id == actor.id)).mappings().first()
        if row is None or row["username"] != actor.username:
            raise PermissionDenied(f"The account {actor.username!r} is not in this history database. Sign in again.")
        if not row["active"]:
            raise PermissionDenied(f"The account {row['username']!r} is disabled. Ask an administrator.")
        if row["role"] not in roles:
            why = (" (administrators manage accounts and may not sign unless an administrator turns on the store "
                   "setting allowing it)") if duty == "sign_review" and row["role"] == "administrator" else ""
            raise PermissionDenied(
                f"{row['full_name']} ({row['username']}, {row['role']}) may not {words}: "
                f"that needs {_a_or_an(allowed)} account{why}."
            )
        return {"id": int(row["id"]), "username": row["username"], "full_name": row["full_name"],
                "role": row["role"], "label": None}

    # ---- reading
    @property
    def accounts_enabled(self) -> bool:
        """True once any account exists (team mode); False = single-user mode."""
        with self._reading("read the accounts") as conn:
            return self._team_mode(conn)

    @property
    def administrator_may_sign(self) -> bool:
        """The store setting letting administrators sign reviews (default False)."""
        with self._reading("read the store settings") as conn:
            return self._admin_may_sign(conn)

    def list_users(self) -> list[User]:
        """Every account, by username."""
        with self._reading("list the accounts") as conn:
            return [_user(r) for r in conn.execute(sa.select(user_t).order_by(user_t.c.username)).mappings()]

    def get_user(self, username: str) -> User | None:
        """One account by username, or None."""
        with self._reading("read an account") as conn:
            row = self._user_row(conn, str(username).strip().lower())
        return None if row is None else _user(row)

    # ---- account management
    def add_user(self, username: str, full_name: str, role: str, password: str, *, actor: User | None = None) -> User:
        """Add an account. ``actor`` must be an administrator, except while the store has
        no administrator yet (the first-run path: ``python -m qcnorm users add``)."""
        func = "HistoryStore.add_user"
        name = self._username(username, func)
        full = _required_text(full_name, "full_name", func)[:200]
        role_ = self._role(role, func)
        encoded = _HASHER.hash(self._new_password(password, name, func))
        with self._transaction(f"add account {name!r}") as conn:
            admins = conn.execute(sa.select(sa.func.count()).select_from(user_t).where(user_t.c.role == "administrator")).scalar_one()
            if actor is None and admins == 0:
                who = {"id": None, "username": os_login(), "label": "first-run set-up"}
            elif actor is None:
                raise PermissionDenied("Only an administrator may add accounts: sign in as one. "
                                       "(Adding without sign-in is possible only before the first administrator exists.)")
            else:
                who = self._who(conn, actor, "manage_accounts", func)
            if self._user_row(conn, name) is not None:
                raise ConfigError(f"An account named {name!r} already exists. Choose another username.")
            uid = int(conn.execute(user_t.insert().values(
                username=name, full_name=full, role=role_, active=True, password_hash=encoded, created_at=_now(),
                failed_count=0,
            )).inserted_primary_key[0])
            row = {"id": uid, "username": name, "full_name": full, "role": role_, "active": True}
            event = self._audit(conn, who, "account_added", f"Account {name} ({full}) added as {role_}.",
                                target="account", target_id=uid, state=row)
            self._reseal_user(conn, uid, event)
        return _user(row)

    def _change_account(self, username: Any, actor: Any, func: str, action: str, values: Mapping[str, Any],
                        detail: str, *, self_allowed: bool = False) -> User:
        with self._transaction(f"change account {username!r}") as conn:
            row = self._user_row_or_raise(conn, username, func)
            if self_allowed and isinstance(actor, User) and actor.id == row["id"] and actor.username == row["username"]:
                if not row["active"]:
                    raise PermissionDenied(f"The account {row['username']!r} is disabled. Ask an administrator.")
                who = {"id": int(row["id"]), "username": row["username"]}
            else:
                who = self._who(conn, actor, "manage_accounts", func)
            after = {**dict(row), **values}
            if row["role"] == "administrator" and row["active"] and not (after["role"] == "administrator" and after["active"]):
                others = conn.execute(sa.select(sa.func.count()).select_from(user_t).where(
                    user_t.c.role == "administrator", user_t.c.active.is_(True), user_t.c.id != row["id"])).scalar_one()
                if others == 0:
                    raise PermissionDenied(f"{row['username']!r} is the last active administrator: add or enable "
                                           "another administrator first.")
            conn.execute(user_t.update().where(user_t.c.id == row["id"]).values(**values))
            event = self._audit(conn, who, action, detail.format(u=row["username"]), target="account",
                                target_id=int(row["id"]), state=_state(after))
            self._reseal_user(conn, int(row["id"]), event)
            return _user(after)

    def set_active(self, username: str, active: bool, *, actor: User | None) -> User:
        """Enable or disable an account (administrators; never the last active administrator)."""
        if not isinstance(active, bool):
            raise ConfigError(f"The 'active' parameter of HistoryStore.set_active must be True or False. Got {active!r} instead.")
        return self._change_account(username, actor, "HistoryStore.set_active",
                                    "account_enabled" if active else "account_disabled", {"active": active},
                                    "Account {u} " + ("enabled." if active else "disabled."))

    def set_role(self, username: str, role: str, *, actor: User | None) -> User:
        """Change an account's role (administrators)."""
        role_ = self._role(role, "HistoryStore.set_role")
        return self._change_account(username, actor, "HistoryStore.set_role", "role_changed", {"role": role_},
                                    "Account {u} is now " + role_ + ".")

    def set_password(self, username: str, new_password: str, *, actor: User | None) -> User:
        """Set a new password (an administrator, or the account holder); clears a lockout."""
        func = "HistoryStore.set_password"
        name = self._username(username, func)
        encoded = _HASHER.hash(self._new_password(new_password, name, func))
        return self._change_account(name, actor, func, "password_changed",
                                    {"password_hash": encoded, "failed_count": 0, "locked_until": None},
                                    "Password of account {u} changed.", self_allowed=True)

    def unlock(self, username: str, *, actor: User | None) -> User:
        """Clear a lockout and the failure count (administrators)."""
        return self._change_account(username, actor, "HistoryStore.unlock", "account_unlocked",
                                    {"failed_count": 0, "locked_until": None}, "Account {u} unlocked.")

    def allow_administrator_signing(self, allowed: bool, *, actor: User | None) -> None:
        """Let administrators sign reviews (default off); an audited store setting."""
        func = "HistoryStore.allow_administrator_signing"
        if not isinstance(allowed, bool):
            raise ConfigError(f"The 'allowed' parameter of {func} must be True or False. Got {allowed!r} instead.")
        with self._transaction("change a store setting") as conn:
            who = self._who(conn, actor, "change_settings", func)
            self._audit(conn, who, "setting_changed",
                        f"Administrators {'may' if allowed else 'may not'} sign reviews.",
                        target="administrator_may_sign", state={"value": allowed})

    # ---- sign-in
    def authenticate(self, username: str, password: str) -> User:
        """Sign in: the account for ``username`` if ``password`` is right.

        Raises :class:`AuthError` with a plain message for an unknown username or
        wrong password (the same words for both), a locked account (with the time it
        unlocks) or a disabled account. Every attempt is an audit event.
        """
        row = self._check_password(username, password, purpose="sign in")
        with self._transaction("record the sign-in") as conn:
            self._audit(conn, {"id": row["id"], "username": row["username"]}, "sign_in",
                        f"{row['username']} signed in.", target="account", target_id=int(row["id"]))
        return _user(row)

    def _check_password(self, username: Any, password: Any, *, purpose: str) -> Mapping[str, Any]:
        """The account row when the password is right; records failures and lockouts."""
        name = username.strip().lower() if isinstance(username, str) else ""
        with self._reading("read the account") as conn:
            row = self._user_row(conn, name) if name else None
        wrong = "Wrong username or password."
        if row is None:
            if not _DUMMY_HASH:
                _DUMMY_HASH.append(_HASHER.hash("not-a-password-of-anyone"))
            self._verify(_DUMMY_HASH[0], password)  # same time as a known account
            with self._transaction("record the failed sign-in") as conn:
                self._audit(conn, {"id": None, "username": "(unknown)"}, "sign_in_failed",
                            f"Failed {purpose}: unknown username (not recorded).")
            raise AuthError(wrong)
        who = {"id": int(row["id"]), "username": row["username"]}
        if not row["active"]:
            with self._transaction("record the refused sign-in") as conn:
                self._audit(conn, who, "sign_in_refused", f"Refused {purpose}: account {row['username']} is disabled.",
                            target="account", target_id=int(row["id"]))
            raise AuthError(f"The account {row['username']!r} is disabled. Ask an administrator to enable it.")
        now = _common.now_utc()
        if row["locked_until"] and datetime.fromisoformat(row["locked_until"]) > now:
            until = datetime.fromisoformat(row["locked_until"])
            with self._transaction("record the refused sign-in") as conn:
                self._audit(conn, who, "sign_in_refused", f"Refused {purpose}: account {row['username']} is locked.",
                            target="account", target_id=int(row["id"]))
            raise AuthError(f"The account {row['username']!r} is locked after {MAX_FAILURES} wrong passwords, until "
                            f"{until:%H:%M} UTC. Wait, or ask an administrator to unlock it.")
        if self._verify(row["password_hash"], password):
            if row["failed_count"] or row["locked_until"]:
                with self._transaction("record the sign-in") as conn:
                    conn.execute(user_t.update().where(user_t.c.id == row["id"]).values(failed_count=0, locked_until=None))
            return row
        with self._transaction("record the failed sign-in") as conn:
            count = conn.execute(sa.select(user_t.c.failed_count).where(user_t.c.id == row["id"])).scalar_one() + 1
            locked = count >= MAX_FAILURES
            until = (now + timedelta(minutes=LOCKOUT_MINUTES)).isoformat(timespec="microseconds") if locked else None
            conn.execute(user_t.update().where(user_t.c.id == row["id"]).values(
                failed_count=0 if locked else count, locked_until=until))
            self._audit(conn, who, "sign_in_failed", f"Failed {purpose}: wrong password for {row['username']} "
                        f"({count} in a row).", target="account", target_id=int(row["id"]))
            if locked:
                self._audit(conn, who, "lockout", f"Account {row['username']} locked for {LOCKOUT_MINUTES} minutes "
                            f"after {MAX_FAILURES} wrong passwords.", target="account", target_id=int(row["id"]))
        if locked:
            raise AuthError(f"{wrong} The account {row['username']!r} is now locked for {LOCKOUT_MINUTES} minutes "
                            f"after {MAX_FAILURES} wrong passwords; an administrator can unlock it.")
        raise AuthError(wrong)

    @staticmethod
    def _verify(encoded: str, password: Any) -> bool:
        if not isinstance(password, str) or not password:
            return False
        try:
            return _HASHER.verify(encoded, password)
        except (VerifyMismatchError, VerificationError, InvalidHashError):
            return False
