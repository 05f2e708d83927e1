#!/usr/bin/env python3
"""Assemble the single self-contained Polewright page.

Reads site/index.html, site/style.css, site/app.js, the wasm-bindgen glue
(--target web) and the wasm binary, and writes one HTML file with

* the CSS inlined in one <style> element,
* the wasm bytes raw-deflate compressed (RFC 1951) and base64-encoded in a non-executed
  data block (#pw-wasm, data-encoding="deflate-raw"); the bootstrap unpacks them with the
  browser's own DecompressionStream (no network: a Blob stream, not a fetch), which cuts the
  page to about 40 % of its uncompressed size,
* glue + bootstrap in ONE inline module script (no import, no fetch: the
  bootstrap calls the glue's initSync({module: bytes})),
* a Content-Security-Policy <meta> (first element of <head>) that allows
  exactly that script and that style by their sha256 hashes.

Python 3.11 standard library only. Paths default to the repository layout.
"""

from __future__ import annotations

import argparse
import base64
import zlib
import hashlib
import re
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent

PLACEHOLDERS = {
    "csp": "@CSP@",
    "style": "<!-- @inline-style -->",
    "wasm": "<!-- @inline-wasm -->",
    "script": "<!-- @inline-script -->",
}


class InlineError(Exception):
    pass


def sha256_source(text: str) -> str:
    """CSP source expression for an inline element's exact text content."""
    digest = hashlib.sha256(text.encode("utf-8")).digest()
    return "'sha256-" + base64.b64encode(digest).decode("ascii") + "'"


def check_inline_text(name: str, text: str, closing: str) -> None:
    """Reject text that would end (or confuse) its element early."""
    lowered = text.lower()
    if closing in lowered:
        raise InlineError(f"{name} contains '{closing}', which would end the element early")
    if closing == "</script" and "<!--" in text:
        raise InlineError(f"{name} contains '<!--', which changes how script text is parsed")


def check_glue(glue: str) -> None:
    """The glue must be self-contained: no static imports of other files."""
    for lineno, line in enumerate(glue.splitlines(), 1):
        if re.match(r"\s*import\s*[\w{*'\"]", line):
            raise InlineError(f"glue line {lineno} imports another file: {line.strip()!r}")
    if "export function initSync" not in glue and not re.search(r"export\s*\{[^}]*\binitSync\b", glue):
        raise InlineError("glue has no initSync export: was it built with --target web?")


def build_csp(script_hash: str, style_hash: str) -> str:
    return "; ".join(
        [
            "default-src 'none'",
            f"script-src {script_hash} 'wasm-unsafe-eval'",
            f"style-src {style_hash}",
            "img-src data:",
            "connect-src 'none'",
            "base-uri 'none'",
            "form-action 'none'",
        ]
    )


def replace_once(html: str, placeholder: str, replacement: str) -> str:
    count = html.count(placeholder)
    if count != 1:
        raise InlineError(f"site/index.html must contain {placeholder!r} exactly once (found {count})")
    return html.replace(placeholder, replacement)


def assemble(index_html: str, css: str, app_js: str, glue_js: str, wasm: bytes) -> str:
    check_glue(glue_js)
    check_inline_text("style.css", css, "</style")
    check_inline_text("glue", glue_js, "</script")
    check_inline_text("app.js", app_js, "</script")
    if not wasm.startswith(b"\0asm"):
        raise InlineError("wasm input does not start with the wasm magic number")

    # Exact element contents; the hashes are over these strings.
    style_text = "\n" + css.strip("\n") + "\n"
    script_text = (
        "\n// ---- wasm-bindgen glue ----\n"
        + glue_js.strip("\n")
        + "\n// ---- Polewright bootstrap (site/app.js), block-scoped ----\n{\n"
        + app_js.strip("\n")
        + "\n}\n"
    )
    packer = zlib.compressobj(9, zlib.DEFLATED, -15)
    packed = packer.compress(wasm) + packer.flush()
    if zlib.decompress(packed, -15) != wasm:
        raise InlineError("deflate round trip failed")
    b64 = base64.b64encode(packed).decode("ascii")
    wasm_lines = "\n".join(b64[i : i + 120] for i in range(0, len(b64), 120))

    csp = build_csp(sha256_source(script_text), sha256_source(style_text))
    html = index_html.replace("\r\n", "\n")
    html = replace_once(html, PLACEHOLDERS["csp"], csp)
    html = replace_once(html, PLACEHOLDERS["style"], f"<style>{style_text}</style>")
    html = replace_once(
        html,
        PLACEHOLDERS["wasm"],
        f'<script type="application/octet-stream" id="pw-wasm" data-encoding="deflate-raw">\n{wasm_lines}\n</script>',
    )
    html = replace_once(html, PLACEHOLDERS["script"], f'<script type="module">{script_text}</script>')

    head = html.split("<head>", 1)
    if len(head) != 2 or not head[1].lstrip().startswith('<meta http-equiv="Content-Security-Policy"'):
        raise InlineError("the CSP <meta> must be the first element of <head>")
    return html


def main(argv: list[str]) -> int:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--site", type=Path, default=ROOT / "site")
    p.add_argument("--glue", type=Path, default=ROOT / "target/web-pkg/polewright_web.js")
    p.add_argument("--wasm", type=Path, default=ROOT / "target/web-pkg/polewright_web_bg.wasm")
    p.add_argument("--out", type=Path, default=ROOT / "dist/polewright.html")
    args = p.parse_args(argv)
    try:
        html = assemble(
            (args.site / "index.html").read_text(encoding="utf-8"),
            (args.site / "style.css").read_text(encoding="utf-8") + "\n" + (args.site / "record.css").read_text(encoding="utf-8"),
            (args.site / "app.js").read_text(encoding="utf-8"),
            args.glue.read_text(encoding="utf-8"),
            args.wasm.read_bytes(),
        )
    except (InlineError, OSError) as e:
        print(f"inline_page: {e}", file=sys.stderr)
        return 1
    args.out.parent.mkdir(parents=True, exist_ok=True)
    tmp = args.out.with_suffix(".html.tmp")
    tmp.write_text(html, encoding="utf-8", newline="\n")
    tmp.replace(args.out)
    size = args.out.stat().st_size
    print(f"wrote {args.out} ({size} bytes, {size / 1024:.1f} KiB; wasm {args.wasm.stat().st_size} bytes)")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
