"""``python -m qcnorm users …`` and ``python -m qcnorm store verify``: accounts and the
record check from the command line.

Passwords are read with ``getpass`` (twice for a new password) or, with
``--password-stdin``, from standard input, one per line: first the acting
administrator's (when ``--as`` is given), then the new password (``add``,
``set-password``). A password is never echoed, printed or logged.

The first account can be added without ``--as`` while the database has no
administrator (the first-run path); afterwards every change names an administrator
with ``--as`` and that administrator's password.
"""

from __future__ import annotations

import argparse
import getpass
import sys
from typing import Any

from .errors import AuthError, ConfigError

__all__ = ["add_parsers", "COMMANDS"]


def add_parsers(sub: Any) -> None:
    """Add the ``users`` and ``store`` sub-commands to the main parser's subparsers."""
    u = sub.add_parser("users", help="manage accounts of the history database (team mode)")
    u.add_argument("--db", help="history database URL or file (default: QCNORM_DB or the user data folder)")
    us = u.add_subparsers(dest="users_command", required=True, parser_class=type(u))

    def common(p: argparse.ArgumentParser, *, acting: bool = True) -> None:
        p.add_argument("--db", default=argparse.SUPPRESS, help="history database URL or file")
        if acting:
            p.add_argument("--as", dest="actor", metavar="ADMIN",
                           help="username of the administrator making the change (asks for their password)")
        p.add_argument("--password-stdin", action="store_true",
                       help="read password(s) from standard input, one per line (for scripts)")

    a = us.add_parser("add", help="add an account (the first one needs no --as)")
    a.add_argument("username")
    a.add_argument("--full-name", required=True, help="the person's full name (printed with signatures)")
    a.add_argument("--role", required=True, choices=["technician", "supervisor", "administrator"])
    common(a)
    ls = us.add_parser("list", help="list the accounts")
    ls.add_argument("--db", default=argparse.SUPPRESS, help="history database URL or file")
    for name, what in (("disable", "disable an account"), ("enable", "enable an account"),
                       ("unlock", "unlock an account locked after wrong passwords"),
                       ("set-password", "set a new password for an account")):
        p = us.add_parser(name, help=what)
        p.add_argument("username")
        common(p)
    r = us.add_parser("set-role", help="change an account's role")
    r.add_argument("username")
    r.add_argument("role", choices=["technician", "supervisor", "administrator"])
    common(r)

    s = sub.add_parser("store", help="check the history database")
    s.add_argument("--db", help="history database URL or file (default: QCNORM_DB or the user data folder)")
    ss = s.add_subparsers(dest="store_command", required=True, parser_class=type(s))
    v = ss.add_parser("verify", help="recompute every record seal; exit 2 naming the first record that does not match")
    v.add_argument("--db", default=argparse.SUPPRESS, help="history database URL or file")


class _Secrets:
    """Passwords from stdin lines (``--password-stdin``) or getpass prompts."""

    def __init__(self, from_stdin: bool) -> None:
        self._lines: list[str] | None = None
        if from_stdin:
            self._lines = [ln.rstrip("\r\n") for ln in sys.stdin.read().splitlines()]

    def get(self, prompt: str, *, confirm: bool = False) -> str:
        if self._lines is not None:
            if not self._lines:
                raise ConfigError(f"Standard input holds no line for the {prompt.lower()} (--password-stdin: one password per line).")
            return self._lines.pop(0)
        first = getpass.getpass(f"{prompt}: ")
        if confirm and getpass.getpass(f"{prompt} (again): ") != first:
            raise ConfigError("The two passwords differ. Nothing was changed; run the command again.")
        return first


def _open(args: argparse.Namespace):  # noqa: ANN202 - HistoryStore
    from .store import HistoryStore

    return HistoryStore(getattr(args, "db", None))


def _actor(store: Any, args: argparse.Namespace, secrets: _Secrets) -> Any:
    if not getattr(args, "actor", None):
        return None
    return store.authenticate(args.actor, secrets.get(f"Password of {args.actor}"))


def _cmd_users(args: argparse.Namespace) -> int:
    from .store import ROLE_DUTIES

    cmd = args.users_command
    with _open(args) as store:
        if cmd == "list":
            users = store.list_users()
            if not users:
                print(f"No accounts in {store.url}: single-user mode (no sign-in; records are not signatures).")
                return 0
            width = max(len(u.username) for u in users)
            for u in users:
                print(f"{u.username:<{width}}  {u.role:<13}  {'active' if u.active else 'disabled':<8}  {u.full_name}")
            return 0
        secrets = _Secrets(args.password_stdin)
        actor = _actor(store, args, secrets)
        if cmd == "add":
            if actor is None and any(u.role == "administrator" for u in store.list_users()):
                raise AuthError("This database already has an administrator: add accounts with --as ADMIN "
                                "(an administrator's username; you will be asked for their password).")
            new = store.add_user(args.username, args.full_name, args.role,
                                 secrets.get(f"New password for {args.username}", confirm=True), actor=actor)
            print(f"Added {new.username} ({new.full_name}) as {new.role}: may {ROLE_DUTIES[new.role]}.")
            if actor is None:
                print("The history database is now in team mode: everyone signs in.")
            return 0
        if actor is None:
            raise AuthError(f"'users {cmd}' needs an administrator: give --as ADMIN (you will be asked for the password).")
        if cmd in ("disable", "enable"):
            u = store.set_active(args.username, cmd == "enable", actor=actor)
        elif cmd == "unlock":
            u = store.unlock(args.username, actor=actor)
        elif cmd == "set-role":
            u = store.set_role(args.username, args.role, actor=actor)
        else:  # set-password
            u = store.set_password(args.username, secrets.get(f"New password for {args.username}", confirm=True), actor=actor)
        print(f"{u.username} ({u.full_name}): {u.role}, {'active' if u.active else 'disabled'}.")
        return 0


def _cmd_store(args: argparse.Namespace) -> int:
    with _open(args) as store:
        check = store.verify_chain()
        url = store.url
    if check.ok:
        print(f"{url}: {check.detail}")
        print(f"Chain head: record {check.head_seq}, hash {check.head_hash}")
        return 0
    sys.stderr.write(f"qcnorm: {url}: the record chain does not hold. First bad record: {check.first_bad}. "
                     f"{check.detail} ({check.checked} records matched before it.)\n")
    return 2


COMMANDS = {"users": _cmd_users, "store": _cmd_store}
