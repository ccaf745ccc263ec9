"""One sheet with its whole history and signatures as a single JSON file: export, checks on import, import.

The file is our own format (``headsheet-sheet-export``, version 1)::

    {"format": "headsheet-sheet-export", "version": 1, "exported": "<UTC time>", "program": "<version>",
     "sheet": {"id": 7, "created": "...", "archived": false},
     "revisions": [{"number": 1, "created": "...", "author": "", "note": "...", "base": null,
                    "frozen": false, "joins": false, "digest": "<SHA-256 of the stored document text>",
                    "document": {...}}, ...],
     "signatures": [{"number": 3, "role": "preparer", "name": "...", "comment": "", "signed": "...",
                     "fingerprint": "..."}, ...],
     "checksum": "sha256:<hex>"}

``checksum`` is the SHA-256 of the rest of the object written as canonical JSON (keys sorted,
no spaces, UTF-8), so a file altered by hand or cut short is refused. ``joins`` (optional, false when
absent) says a save continues the revision of the save before it, so the history groups and labels
its revisions as the exporting installation did (server.revisions). Each revision's
``digest`` is checked against its document too. Importing always makes a new sheet.

A checksum shows only that a file is whole: anyone can recompute one. So each installation also
signs its exports with its own Ed25519 key (``installation`` holds the public key, ``signature``
the signature over the canonical object without ``checksum`` and ``signature``; RFC 8032). The
signatures of an import count as sign-off only when the export is signed by a key the importing
server trusts (``headsheet trust add``); otherwise they are shown as imported, not made here.
"""

from __future__ import annotations

import hashlib
import json
import math
import os
import socket
from datetime import datetime, timezone
from pathlib import Path
from typing import Any

from cryptography.exceptions import InvalidSignature
from cryptography.hazmat.primitives import serialization
from cryptography.hazmat.primitives.asymmetric.ed25519 import Ed25519PrivateKey, Ed25519PublicKey

from calc.model import sheet as calc_sheet
from server.editing import json_problem
from server.store import Revision, Store, digest_of, dump_document

FORMAT = "headsheet-sheet-export"
VERSION = 1
ROLES = ("preparer", "checker", "approver")
#: Most revisions a file may carry: years of work on one sheet, not an attempt to fill the disk.
MAX_REVISIONS = 20_000
MAX_TEXT = 2_000


class ImportRefused(ValueError):
    """A file that cannot be imported, and why, in words for the user."""


def _canonical(obj: Any) -> bytes:
    return json.dumps(obj, ensure_ascii=False, sort_keys=True, separators=(",", ":"), allow_nan=False).encode("utf-8")


KEY_FILE = "installation-key.pem"


def installation_key(data_dir: Path) -> Ed25519PrivateKey:
    """This installation's signing key, made once in the data folder (readable by its owner only)."""
    path = Path(data_dir) / KEY_FILE
    if not path.exists():
        key = Ed25519PrivateKey.generate()
        pem = key.private_bytes(serialization.Encoding.PEM, serialization.PrivateFormat.PKCS8,
                                serialization.NoEncryption())
        fd = os.open(path, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o600)
        with os.fdopen(fd, "wb") as f:
            f.write(pem)
    return serialization.load_pem_private_key(path.read_bytes(), password=None)


def public_hex(key: Ed25519PrivateKey) -> str:
    return key.public_key().public_bytes(serialization.Encoding.Raw, serialization.PublicFormat.Raw).hex()


def _signed_part(payload: dict) -> bytes:
    return _canonical({k: v for k, v in payload.items() if k not in ("checksum", "signature")})


def signed_by(payload: dict) -> str | None:
    """The public key (hex) whose valid signature the export carries, or None."""
    inst, sig = payload.get("installation"), payload.get("signature")
    if not isinstance(inst, dict) or not isinstance(sig, str) or not sig.startswith("ed25519:"):
        return None
    try:
        public = Ed25519PublicKey.from_public_bytes(bytes.fromhex(str(inst.get("public_key", ""))))
        public.verify(bytes.fromhex(sig[len("ed25519:"):]), _signed_part(payload))
    except (ValueError, InvalidSignature):
        return None
    return inst["public_key"]


def checksum(payload: dict) -> str:
    """The checksum of an export object (every key but ``checksum`` itself)."""
    body = {k: v for k, v in payload.items() if k != "checksum"}
    return "sha256:" + hashlib.sha256(_canonical(body)).hexdigest()


def _program() -> str:
    try:
        from calc.record.fingerprint import program_version
        return program_version()
    except Exception:  # the version is a courtesy in the file, never a reason to fail an export
        return "unknown"


def export_sheet(store: Store, sheet_id: int) -> dict:
    """The export object of one sheet (raises SheetNotFound)."""
    rows = store.export_rows(sheet_id)
    payload = {
        "format": FORMAT,
        "version": VERSION,
        "exported": datetime.now(timezone.utc).isoformat(timespec="seconds"),
        "program": _program(),
        "sheet": rows["sheet"],
        "revisions": [{"number": r.number, "created": r.created, "author": r.author, "note": r.note, "base": r.base,
                       "frozen": r.frozen, "joins": r.joins, "digest": r.digest,
                       "document": json.loads(r.document_json)}
                      for r in rows["revisions"]],
        "signatures": rows["signatures"],
    }
    key = installation_key(store.data_dir)
    payload["installation"] = {"public_key": public_hex(key), "name": socket.gethostname()[:60]}
    payload["signature"] = "ed25519:" + key.sign(_signed_part(payload)).hex()
    payload["checksum"] = checksum(payload)
    return payload


def export_bytes(store: Store, sheet_id: int) -> bytes:
    return json.dumps(export_sheet(store, sheet_id), ensure_ascii=False, indent=1, allow_nan=False).encode("utf-8")


def _text(obj: dict, key: str, where: str, required: bool = True) -> str:
    value = obj.get(key, None if required else "")
    if not isinstance(value, str):
        raise ImportRefused(f"{where}: '{key}' must be text.")
    if len(value) > MAX_TEXT:
        raise ImportRefused(f"{where}: '{key}' is longer than {MAX_TEXT} characters.")
    return value


def read_export(raw: bytes | str) -> dict:
    """Parse and check an export file; ImportRefused says exactly what is wrong with it."""
    try:
        data = json.loads(raw, parse_constant=_no_constant, parse_float=_finite)
    except RecursionError:
        raise ImportRefused("The file nests too deeply to be a Headsheet export.") from None
    except (ValueError, UnicodeDecodeError) as e:
        raise ImportRefused(f"The file is not JSON ({str(e)[:120]}).") from None
    if not isinstance(data, dict) or data.get("format") != FORMAT:
        raise ImportRefused(f"The file is not a Headsheet sheet export (its 'format' should be '{FORMAT}').")
    version = data.get("version")
    if version != VERSION:
        if isinstance(version, int) and not isinstance(version, bool) and version > VERSION:
            raise ImportRefused(f"The file is export version {version}, made by a newer Headsheet; "
                                f"this one reads version {VERSION}.")
        raise ImportRefused(f"The file's export version ({str(version)[:20]}) is not one this program reads.")
    if data.get("checksum") != checksum(data):
        raise ImportRefused("The file's checksum does not match its contents: it was changed or cut short "
                            "after it was exported.")
    return data


def _no_constant(name: str):
    raise ValueError(f"{name} is not a number JSON allows")


def _finite(text: str) -> float:
    """A JSON number as a float, refusing one too large to be finite (1e999 reads as infinity)."""
    value = float(text)
    if not math.isfinite(value):
        raise ValueError(f"the number {text[:40]} is too large to be finite")
    return value


def check_export(data: dict) -> tuple[str, list[Revision], list[dict], dict]:
    """The sheet's creation time, revisions and signatures from a read export, each checked."""
    sheet = data.get("sheet")
    if not isinstance(sheet, dict):
        raise ImportRefused("The file has no 'sheet' object.")
    created = _text(sheet, "created", "sheet")
    revisions = data.get("revisions")
    if not isinstance(revisions, list) or not revisions:
        raise ImportRefused("The file holds no revisions.")
    if len(revisions) > MAX_REVISIONS:
        raise ImportRefused(f"The file holds {len(revisions)} revisions; at most {MAX_REVISIONS} can be imported.")
    out: list[Revision] = []
    for i, r in enumerate(revisions):
        where = f"revision {i + 1}"
        if not isinstance(r, dict):
            raise ImportRefused(f"{where} is not an object.")
        number = r.get("number")
        if number != i + 1 or isinstance(number, bool):
            raise ImportRefused(f"{where}: revisions must be numbered 1, 2, 3… in order (found {str(number)[:20]}).")
        base = r.get("base")
        if base is not None and (not isinstance(base, int) or isinstance(base, bool) or not 0 < base < number):
            raise ImportRefused(f"{where}: 'base' must be an earlier revision number or null.")
        frozen = r.get("frozen")
        if not isinstance(frozen, bool):
            raise ImportRefused(f"{where}: 'frozen' must be true or false.")
        joins = r.get("joins", False)  # absent in files from before revisions grouped saves
        if not isinstance(joins, bool):
            raise ImportRefused(f"{where}: 'joins' must be true or false.")
        document = r.get("document")
        if not isinstance(document, dict):
            raise ImportRefused(f"{where}: 'document' must be a sheet document (an object).")
        problem = json_problem(document)
        if problem:
            raise ImportRefused(f"{where}: the document {problem}.")
        # The same checks and limits as a sheet saved through the pages: a value refused refuses the file;
        # a value only not given yet (a new element still asking for it) is what the pages store too.
        mistakes = calc_sheet.parse(document).mistakes
        if mistakes:
            first = mistakes[0]
            raise ImportRefused(f"{where}: the document does not pass the sheet's checks ({len(mistakes)} "
                                f"error(s); the first: {first.path or 'the sheet'} {first.message}).")
        text = dump_document(document)
        if digest_of(text) != r.get("digest"):
            raise ImportRefused(f"{where}: the document does not match its digest.")
        out.append(Revision(0, number, text, digest_of(text), _text(r, "created", where), _text(r, "author", where),
                            _text(r, "note", where), base, frozen, joins and number > 1))
    signatures = data.get("signatures", [])
    if not isinstance(signatures, list):
        raise ImportRefused("'signatures' must be a list.")
    seen: set[tuple[int, str]] = set()
    sigs: list[dict] = []
    for k, s in enumerate(signatures):
        where = f"signature {k + 1}"
        if not isinstance(s, dict):
            raise ImportRefused(f"{where} is not an object.")
        number, role = s.get("number"), s.get("role")
        if not isinstance(number, int) or isinstance(number, bool) or not 0 < number <= len(out):
            raise ImportRefused(f"{where}: 'number' names no revision in the file.")
        if not out[number - 1].frozen:
            raise ImportRefused(f"{where}: revision {number} is signed but not frozen.")
        if role not in ROLES or (number, role) in seen:
            raise ImportRefused(f"{where}: the role must be preparer, checker or approver, once per revision.")
        seen.add((number, role))
        sigs.append({"number": number, "role": role,
                     **{key: _text(s, key, where) for key in ("name", "comment", "signed", "fingerprint")},
                     **{key: _text(s, key, where, required=False) for key in
                        ("login", "initials", "identified", "version")}})
    origin = {"sheet_id": sheet.get("id") if isinstance(sheet.get("id"), int) else None,
              "exported": str(data.get("exported", ""))[:40], "program": str(data.get("program", ""))[:40],
              "checksum": data["checksum"]}
    # The file's checksum shows only that it is whole: anyone can write one. Its signatures are kept
    # word for word but marked as imported, so the record never shows them as made on this server.
    source = (f"an export of sheet {origin['sheet_id'] or '?'} made {origin['exported'][:16].replace('T', ' ')} "
              f"by Headsheet {origin['program']}")
    origin["signed_by"] = signed_by(data)
    if origin["signed_by"]:
        source += f", signed by installation key {origin['signed_by'][:16]}…"
    for sig in sigs:
        sig["origin"] = source
    return created, out, sigs, origin


def trust_origins(store: Store, sigs: list[dict], origin: dict) -> None:
    """Mark the signatures trusted when the export is signed by an installation this server trusts."""
    key = origin.get("signed_by")
    name = store.trusted_keys().get(key) if key else None
    if name is not None:
        for sig in sigs:
            sig["origin"] = f"trusted:installation '{name}' (key {key[:16]}…)"


def import_sheet(store: Store, raw: bytes | str) -> int:
    """Import an export file as a new sheet; returns the new sheet's id. Never overwrites anything."""
    created, revisions, signatures, origin = check_export(read_export(raw))
    trust_origins(store, signatures, origin)
    return store.import_rows(created, revisions, signatures, origin)
