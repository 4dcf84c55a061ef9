"""Small HTML builders for the report: every text escaped, tables from rows, one inline style sheet."""

from __future__ import annotations

import html

STYLE = """
body{font-family:"DejaVu Sans",system-ui,sans-serif;color:#1d1f24;margin:0 auto;max-width:1180px;padding:24px;
line-height:1.4;font-size:14px}
h1{font-size:24px;margin:0 0 4px}h2{font-size:18px;border-bottom:2px solid #22223b;padding-bottom:2px;margin-top:32px}
h3{font-size:15px;margin:18px 0 6px}
.sub{color:#555}.cautions{background:#fff4e5;border-left:6px solid #d62828;padding:8px 16px;margin:16px 0}
.cautions li{margin:4px 0}
table{border-collapse:collapse;margin:6px 0 12px;font-size:12.5px}
th,td{border:1px solid #d5d8de;padding:3px 7px;text-align:left;vertical-align:top}
th{background:#eef0f4}td.num{text-align:right;font-variant-numeric:tabular-nums}
.pass{color:#1b7f3b;font-weight:bold}.warning{color:#b26a00;font-weight:bold}.fail{color:#c1121f;font-weight:bold}
figure{margin:12px 0}figure img{max-width:100%;height:auto;border:1px solid #e1e3e8}
figcaption{font-size:12px;color:#444}code{font-size:12px}
.channels{font-family:"DejaVu Sans Mono",monospace;font-size:12px;word-break:break-word}
nav a{margin-right:12px}
@media print{h2{page-break-after:avoid}figure{page-break-inside:avoid}}
"""


def esc(value) -> str:
    return html.escape("" if value is None else str(value), quote=True)


def tag(name: str, body: str = "", **attrs) -> str:
    """<name attrs>body</name>; `body` is HTML already escaped; attribute values are escaped here."""
    rendered = "".join(f' {k.rstrip("_").replace("_", "-")}="{esc(v)}"' for k, v in attrs.items() if v is not None)
    return f"<{name}{rendered}>{body}</{name}>"


def para(text: str, **attrs) -> str:
    return tag("p", esc(text), **attrs)


def bullets(items) -> str:
    return tag("ul", "".join(tag("li", esc(i)) for i in items)) if items else para("none")


def table(head: list[str], rows: list[list], numeric: set[int] = frozenset(), classes=None) -> str:
    """A table; a cell given as (text, css class) gets that class; columns in `numeric` align right."""
    out = [tag("tr", "".join(tag("th", esc(h)) for h in head))]
    for row in rows:
        cells = []
        for k, cell in enumerate(row):
            text, css = cell if isinstance(cell, tuple) else (cell, None)
            css = " ".join(c for c in (css, "num" if k in numeric else None) if c) or None
            cells.append(tag("td", esc(text), class_=css))
        out.append(tag("tr", "".join(cells)))
    return tag("table", "".join(out))


def section(anchor: str, title: str, body: str) -> str:
    return tag("section", tag("h2", esc(title)) + body, id=anchor)


def figure(data_uri: str, alt: str, caption: str, gid: str) -> str:
    return tag("figure", f'<img src="{esc(data_uri)}" alt="{esc(alt)}" id="{esc(gid)}">' +
               tag("figcaption", esc(caption)))


def document(title: str, body: str) -> str:
    return ("<!DOCTYPE html>\n" + tag("html", tag("head", '<meta charset="utf-8">' + tag("title", esc(title)) +
                                                   '<meta name="viewport" content="width=device-width">' +
                                                   tag("style", STYLE)) + tag("body", body), lang="en") + "\n")
