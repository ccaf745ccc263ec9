"""The `headsheet` command: its entry point, and the commands about the store and the server (serve, key, backup,
export, import); the calculation commands are registered from `calc.commands`."""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

DEFAULT_DATA = "headsheet-data"


def _store(data: str, must_exist: bool = True):
    from server.store import DB_NAME, Store

    folder = Path(data)
    if must_exist and not (folder / DB_NAME).is_file():
        sys.exit(f"headsheet: no sheet store in {folder} (expected {folder / DB_NAME}); give the folder with --data")
    return Store(folder)


def cmd_serve(args) -> int:
    from server.access import BadKey
    from server.main import ServeRefused, serve

    try:
        serve(Path(args.data), host=args.host, port=args.port, share=args.share, key=args.key,
              host_names=args.host_name, behind_proxy=args.behind_proxy,
              certfile=args.certfile, keyfile=args.keyfile)
    except BadKey as e:
        sys.exit(f"headsheet: --key: {e}")
    except ServeRefused as e:
        sys.exit(f"headsheet: {e}")
    return 0


def cmd_key(args) -> int:
    from server.access import BadKey, KeyFile, new_key

    keys = KeyFile(Path(args.data))
    try:
        if args.set is not None:
            key = keys.write(args.set)
        elif args.new:
            key = keys.write(new_key())
        else:
            key = keys.read()
            if key is None:
                sys.exit(f"headsheet: no access key yet in {args.data}; `headsheet key --new` makes one "
                         "(`headsheet serve --share` does too)")
    except BadKey as e:
        sys.exit(f"headsheet: {e}")
    print(key)
    if args.set is not None or args.new:
        print(f"(kept in {keys.path}; a running server uses it at once, and browsers must type it again)",
              file=sys.stderr)
    return 0


def cmd_backup(args) -> int:
    out = Path(args.out)
    if out.exists():
        sys.exit(f"headsheet: {out} exists; a backup never overwrites a file, so name a new one")
    if not out.parent.is_dir():
        sys.exit(f"headsheet: there is no folder {out.parent}")
    counts = _store(args.data).backup(out)
    print(f"Backed up {counts['sheets']} sheets, {counts['revisions']} revisions and {counts['signatures']} "
          f"signatures to {out} (checked; a consistent copy even while the server runs)")
    return 0


def cmd_export(args) -> int:
    from server import transfer
    from server.store import SheetNotFound

    out = Path(args.out)
    if out.exists():
        sys.exit(f"headsheet: {out} exists; an export never overwrites a file, so name a new one")
    try:
        body = transfer.export_bytes(_store(args.data), args.sheet_id)
    except SheetNotFound as e:
        sys.exit(f"headsheet: {e}")
    out.write_bytes(body)
    print(f"Exported sheet {args.sheet_id} with its history and signatures to {out}")
    return 0


def cmd_import(args) -> int:
    from server import transfer

    try:
        raw = Path(args.file).read_bytes()
    except OSError as e:
        sys.exit(f"headsheet: cannot read {args.file}: {e.strerror}")
    try:
        sheet_id = transfer.import_sheet(_store(args.data, must_exist=False), raw)
    except transfer.ImportRefused as e:
        sys.exit(f"headsheet: {args.file} not imported: {e}")
    print(f"Imported {args.file} as sheet {sheet_id}")
    return 0


def add_commands(sub: argparse._SubParsersAction) -> None:
    """Register serve, key, backup, export and import on the `headsheet` command's subparsers."""
    data_help = f"folder of the sheet store (default ./{DEFAULT_DATA})"
    s = sub.add_parser("serve", help="serve the calculation sheet in the browser")
    s.add_argument("--data", default=DEFAULT_DATA, help=data_help)
    s.add_argument("--host", default="127.0.0.1",
                   help="address to listen on (default this computer only); any other needs the access key")
    s.add_argument("--port", type=int, default=8000)
    s.add_argument("--share", action="store_true",
                   help="share on the local network: listen on every interface, print the addresses to open, "
                        "and require the access key")
    s.add_argument("--key", default=None, metavar="KEY",
                   help="set a new access key (at least 8 letters or digits) before starting")
    s.add_argument("--host-name", action="append", default=[], metavar="NAME",
                   help="another name this server is reached by (a DNS name on the site network); it answers "
                        "only to this computer's own names, its addresses and these")
    s.add_argument("--behind-proxy", action="store_true",
                   help="a reverse proxy is in front: believe its forwarded-for headers for client addresses")
    s.add_argument("--certfile", default=None, metavar="PATH",
                   help="serve HTTPS with this PEM certificate (give --keyfile too); cookies are then Secure")
    s.add_argument("--keyfile", default=None, metavar="PATH",
                   help="the PEM private key of --certfile (without a passphrase)")
    s.set_defaults(func=cmd_serve)

    s = sub.add_parser("key", help="print the access key of a shared store, or change it")
    s.add_argument("--data", default=DEFAULT_DATA, help=data_help)
    g = s.add_mutually_exclusive_group()
    g.add_argument("--new", action="store_true", help="make a new random key (signs every browser out)")
    g.add_argument("--set", default=None, metavar="KEY", help="use KEY as the access key")
    s.set_defaults(func=cmd_key)

    s = sub.add_parser("backup", help="write a consistent copy of the store (safe while the server runs)")
    s.add_argument("--data", default=DEFAULT_DATA, help=data_help)
    s.add_argument("out", metavar="OUT.sqlite", help="the copy to write (must not exist)")
    s.set_defaults(func=cmd_backup)

    s = sub.add_parser("export", help="write one sheet with its whole history and signatures to a JSON file")
    s.add_argument("--data", default=DEFAULT_DATA, help=data_help)
    s.add_argument("sheet_id", type=int, metavar="SHEET_ID")
    s.add_argument("out", metavar="OUT.json", help="the file to write (must not exist)")
    s.set_defaults(func=cmd_export)

    s = sub.add_parser("import", help="add a sheet from an export file as a new sheet (never overwrites)")
    s.add_argument("--data", default=DEFAULT_DATA, help=data_help)
    s.add_argument("file", metavar="FILE", help="a file written by `headsheet export` or the Export link")
    s.set_defaults(func=cmd_import)

    s = sub.add_parser("accounts", help="the accounts that may sign records: list, add, disable, set a password")
    s.add_argument("--data", default=DEFAULT_DATA, help=data_help)
    s.add_argument("action", choices=["list", "add", "disable", "password"])
    s.add_argument("login", nargs="?", default="", metavar="LOGIN")
    s.add_argument("--name", default="", help="the person's name as the record shows it (add)")
    s.add_argument("--initials", default="", help="the person's initials (add)")
    s.add_argument("--roles", default="", help="comma-separated: preparer, checker, approver (add)")
    s.add_argument("--admin", action="store_true", help="may add and disable accounts on the Accounts page (add)")
    s.add_argument("--password-stdin", action="store_true", help="read the password from standard input")
    s.set_defaults(func=cmd_accounts)

    s = sub.add_parser("trust", help="the installations whose signed exports count as sign-off here: show this "
                                     "one's key, list, add or remove")
    s.add_argument("--data", default=DEFAULT_DATA, help=data_help)
    s.add_argument("action", choices=["show", "list", "add", "remove"])
    s.add_argument("key", nargs="?", default="", metavar="KEY", help="an installation key, 64 hex digits")
    s.add_argument("--name", default="", help="a name for the installation (add)")
    s.set_defaults(func=cmd_trust)


def _password(args, prompt: str) -> str:
    """A password from standard input (--password-stdin, for scripts) or typed without echo."""
    if args.password_stdin:
        return sys.stdin.readline().rstrip("\r\n")
    import getpass

    first = getpass.getpass(prompt)
    if getpass.getpass("Type it again: ") != first:
        sys.exit("headsheet: the two passwords differ; nothing was changed")
    return first


def cmd_accounts(args) -> int:
    from server.accounts import ROLES, AccountRefused, Accounts, NewAccount

    accounts = Accounts(_store(args.data, must_exist=args.action != "add"))
    try:
        if args.action == "list":
            for a in accounts.store.accounts():
                state = f"disabled {a.disabled[:10]}" if a.disabled else "signs"
                print(f"{a.login:20} {a.name} ({a.initials}); may sign as {', '.join(a.roles)}"
                      f"{'; administrator' if a.admin else ''}; {state}")
        elif args.action == "add":
            if not args.login or not args.name or not args.initials:
                sys.exit("headsheet: accounts add needs LOGIN, --name and --initials")
            roles = tuple(r.strip() for r in (args.roles or "").split(",") if r.strip())
            bad = [r for r in roles if r not in ROLES]
            if bad or not roles:
                sys.exit(f"headsheet: --roles is a comma-separated list of {', '.join(ROLES)}")
            made = accounts.create(NewAccount(args.login, args.name, args.initials, roles, args.admin),
                                   _password(args, f"Password for {args.login}: "), "command line")
            print(f"Account '{made.login}' ({made.name}) added; it may sign as {', '.join(made.roles)}"
                  f"{' and is an administrator' if made.admin else ''}.")
        elif args.action == "password":
            who = accounts.set_password(args.login or "", _password(args, f"New password for {args.login}: "))
            print(f"The password of '{who.login}' was changed.")
        elif args.action == "disable":
            gone = accounts.disable(args.login or "")
            print(f"Account '{gone.login}' disabled: its signatures stay, it signs no more.")
    except AccountRefused as refused:
        sys.exit(f"headsheet: {refused}")
    return 0


def cmd_trust(args) -> int:
    from server import transfer

    store = _store(args.data, must_exist=args.action != "show")
    if args.action == "show":
        print(transfer.public_hex(transfer.installation_key(store.data_dir)))
        print("(this installation's key: give it to a server that should trust this one's exports)",
              file=sys.stderr)
    elif args.action == "list":
        for key, name in sorted(store.trusted_keys().items(), key=lambda kv: kv[1]):
            print(f"{key}  {name}")
    else:
        key = (args.key or "").strip().lower()
        if len(key) != 64 or any(c not in "0123456789abcdef" for c in key):
            sys.exit("headsheet: an installation key is 64 hex digits (`headsheet trust show` on that server)")
        if args.action == "add":
            if not args.name.strip():
                sys.exit("headsheet: give the installation a --name (e.g. the office it is in)")
            store.trust_key(key, args.name.strip()[:60], "command line")
            print(f"Exports signed by {key[:16]}… ({args.name.strip()}) are trusted from now on.")
        elif not store.distrust_key(key):
            sys.exit(f"headsheet: {key[:16]}… is not a trusted key")
        else:
            print(f"Exports signed by {key[:16]}… are no longer trusted (sheets imported before keep their mark).")
    return 0


def build_parser() -> argparse.ArgumentParser:
    """The whole `headsheet` command: the calculation commands, then the server's."""
    from calc import commands

    p = argparse.ArgumentParser(prog="headsheet", description="Pressurised water line calculation sheet.")
    sub = p.add_subparsers(dest="command", required=True)
    commands.add_commands(sub)
    add_commands(sub)
    return p


def main(argv: list[str] | None = None) -> int:
    args = build_parser().parse_args(argv)
    try:
        return args.func(args)
    except BrokenPipeError:
        # The reader went away (`headsheet solve ... | head`): nothing more to say, and no traceback.
        import os

        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return 0


if __name__ == "__main__":
    sys.exit(main())
