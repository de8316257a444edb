#!/usr/bin/env python3
"""trunk post-build hook: move the inline scripts trunk writes into
index.html (the module that loads the app, and the reload script of
`trunk serve`) into files beside it, so the page's Content-Security-Policy
can forbid inline scripts. Run by trunk with TRUNK_STAGING_DIR set."""
import hashlib
import os
import re
import sys

staging = os.environ.get("TRUNK_STAGING_DIR")
if not staging:
    sys.exit("externalise-scripts: TRUNK_STAGING_DIR is not set (run through trunk)")
path = os.path.join(staging, "index.html")
# trunk's own links start with its public URL; ours do the same.
public_url = os.environ.get("TRUNK_PUBLIC_URL", "/")
if not public_url.endswith("/"):
    public_url += "/"
with open(path, encoding="utf-8") as f:
    html = f.read()

pattern = re.compile(r"<script(?P<attrs>[^>]*)>(?P<body>.*?)</script>", re.S)


def externalise(match):
    attrs, body = match.group("attrs"), match.group("body")
    if "src=" in attrs or not body.strip():
        return match.group(0)
    digest = hashlib.sha256(body.encode()).hexdigest()[:16]
    name = f"start-{digest}.js"
    with open(os.path.join(staging, name), "w", encoding="utf-8") as out:
        out.write(body)
    return f'<script{attrs} src="{public_url}{name}"></script>'


html, count = pattern.subn(externalise, html)
with open(path, "w", encoding="utf-8") as f:
    f.write(html)
print(f"externalise-scripts: {count} script(s) checked in index.html")
