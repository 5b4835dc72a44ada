#!/usr/bin/env python3
"""Turn a terminal capture with colour escapes (ECMA-48 SGR sequences, as
`tmux capture-pane -e -p` writes them) into one self-contained HTML page:
a <pre> block of coloured spans on a dark background.

    scripts/ansi-to-html.py PANE.ansi OUT.html [TITLE]

Handles the SGR attributes a terminal editor uses: reset, bold, italic,
underline, reverse, the 8/16 basic colours, the 256-colour palette and
24-bit colour. Everything else is dropped. Standard library only.
"""
import html
import re
import sys

BASIC = [
    "#000000", "#cd0000", "#00cd00", "#cdcd00", "#0000ee", "#cd00cd", "#00cdcd", "#e5e5e5",
    "#7f7f7f", "#ff0000", "#00ff00", "#ffff00", "#5c5cff", "#ff00ff", "#00ffff", "#ffffff",
]
FG, BG = "#d0d0d0", "#1c1c1c"


def palette(n):
    """The xterm 256-colour palette: 16 basic, a 6x6x6 cube, 24 greys."""
    if n < 16:
        return BASIC[n]
    if n < 232:
        n -= 16
        steps = [0, 95, 135, 175, 215, 255]
        r, g, b = steps[n // 36], steps[(n // 6) % 6], steps[n % 6]
        return "#%02x%02x%02x" % (r, g, b)
    v = 8 + 10 * (n - 232)
    return "#%02x%02x%02x" % (v, v, v)


def convert(text):
    state = {"fg": None, "bg": None, "b": False, "i": False, "u": False, "rev": False}
    out = []
    pos = 0
    for m in re.finditer(r"\x1b\[([0-9;:]*)m|\x1b[^a-zA-Z]*[a-zA-Z]", text):
        out.append(span(text[pos:m.start()], state))
        pos = m.end()
        if m.group(1) is None:
            continue
        codes = [int(c) if c else 0 for c in re.split("[;:]", m.group(1))] or [0]
        k = 0
        while k < len(codes):
            c = codes[k]
            if c == 0:
                state.update(fg=None, bg=None, b=False, i=False, u=False, rev=False)
            elif c == 1:
                state["b"] = True
            elif c == 3:
                state["i"] = True
            elif c == 4:
                state["u"] = True
            elif c == 7:
                state["rev"] = True
            elif c == 22:
                state["b"] = False
            elif c == 23:
                state["i"] = False
            elif c == 24:
                state["u"] = False
            elif c == 27:
                state["rev"] = False
            elif 30 <= c <= 37:
                state["fg"] = BASIC[c - 30]
            elif 90 <= c <= 97:
                state["fg"] = BASIC[c - 90 + 8]
            elif 40 <= c <= 47:
                state["bg"] = BASIC[c - 40]
            elif 100 <= c <= 107:
                state["bg"] = BASIC[c - 100 + 8]
            elif c == 39:
                state["fg"] = None
            elif c == 49:
                state["bg"] = None
            elif c in (38, 48) and k + 1 < len(codes):
                key = "fg" if c == 38 else "bg"
                if codes[k + 1] == 5 and k + 2 < len(codes):
                    state[key] = palette(codes[k + 2] % 256)
                    k += 2
                elif codes[k + 1] == 2 and k + 4 < len(codes):
                    state[key] = "#%02x%02x%02x" % tuple(x % 256 for x in codes[k + 2:k + 5])
                    k += 4
            k += 1
    out.append(span(text[pos:], state))
    return "".join(out)


def span(chunk, s):
    if not chunk:
        return ""
    fg, bg = s["fg"] or FG, s["bg"] or BG
    if s["rev"]:
        fg, bg = bg, fg
    style = "color:%s;background:%s" % (fg, bg)
    if s["b"]:
        style += ";font-weight:bold"
    if s["i"]:
        style += ";font-style:italic"
    if s["u"]:
        style += ";text-decoration:underline"
    return '<span style="%s">%s</span>' % (style, html.escape(chunk))


def main():
    if len(sys.argv) < 3:
        sys.stderr.write(__doc__)
        return 2
    with open(sys.argv[1], encoding="utf-8", errors="replace") as f:
        body = convert(f.read())
    title = html.escape(sys.argv[3] if len(sys.argv) > 3 else "terminal")
    page = (
        "<!doctype html><html><head><meta charset='utf-8'><title>%s</title>"
        "<style>body{margin:0;background:%s}pre{margin:0;padding:8px;"
        "font:15px/1.25 'DejaVu Sans Mono',monospace;color:%s}</style></head>"
        "<body><pre>%s</pre></body></html>\n" % (title, BG, FG, body)
    )
    with open(sys.argv[2], "w", encoding="utf-8") as f:
        f.write(page)
    return 0


if __name__ == "__main__":
    sys.exit(main())
