#!/usr/bin/env bash
# Take the screenshot of docs/editor.md: Debian's neovim, started with a
# minimal configuration that runs `tankwave serve-editor`, opens a copy of
# the class-C demo with one unit written wrong (a diagnostic) and shows the
# hover of a value (a limit in degC, shown in kelvin), in a tmux pane of its own; the pane is captured with
# its colours, turned into HTML and drawn to a PNG by headless chromium
# (scripts/render-report.sh).
#
#   scripts/editor-screenshot.sh [OUT.png [FIGURES.png]]
#       (default docs/editor.png and docs/editor-figures.png)
#
# The second picture is the unchanged demo after a save: the figures of the
# solve as code lenses over the `analyze` and `require` lines.
#
# Needs tmux, neovim and chromium (Debian: apt-get install -y tmux neovim
# chromium) and a built binary (cargo build). Not run in CI.
set -euo pipefail

root="$(cd "$(dirname "$0")/.." && pwd)"
out="${1:-$root/docs/editor.png}"
figures="${2:-$root/docs/editor-figures.png}"
bin="$root/target/debug/tankwave"
for tool in tmux nvim python3; do
    if ! command -v "$tool" >/dev/null 2>&1; then
        echo "$0: $tool not found (Debian: apt-get install -y tmux neovim)" >&2
        exit 3
    fi
done
if [ ! -x "$bin" ]; then
    echo "$0: build tankwave first (cargo build)" >&2
    exit 3
fi

work="$(mktemp -d)"
sock="tankwave-shot-$$"
cleanup() {
    tmux -L "$sock" kill-server >/dev/null 2>&1 || true
    rm -rf "$work"
}
trap cleanup EXIT

mkdir -p "$work/models"
cp "$root/netlists/models/tw-hf25.tank" "$work/models/"
# one unit written wrong: the output capacitor in henries
sed 's/^capacitor c2    out   gnd   2.35nF/capacitor c2    out   gnd   2.35nH/' \
    "$root/netlists/ism-13m56-classc.tank" > "$work/stage.tank"
grep -q '2.35nH' "$work/stage.tank"
cp "$root/netlists/ism-13m56-classc.tank" "$work/clean.tank"

cat > "$work/init.lua" <<LUA
vim.o.number = true
vim.o.signcolumn = "yes"
vim.o.swapfile = false
vim.o.shortmess = vim.o.shortmess .. "I"
vim.o.hlsearch = false
vim.cmd("highlight NormalFloat ctermbg=237 ctermfg=252")
vim.cmd("autocmd BufRead,BufNewFile *.tank set filetype=tankwave")
vim.api.nvim_create_autocmd("FileType", {
  pattern = "tankwave",
  callback = function(args)
    local id = vim.lsp.start_client({
      name = "tankwave",
      cmd = { "$bin", "serve-editor" },
      root_dir = "$work",
    })
    if id then vim.lsp.buf_attach_client(args.buf, id) end
  end,
})
vim.keymap.set("n", "K", vim.lsp.buf.hover)
vim.cmd("highlight LspCodeLens ctermfg=114")
LUA

cd "$work"

# Start neovim on FILE in a fresh pane, give the server time to answer.
start() {
    tmux -L "$sock" kill-server >/dev/null 2>&1 || true
    tmux -L "$sock" -f /dev/null new-session -d -s shot -x 150 -y 40 \
        "TERM=tmux-256color nvim -u $work/init.lua $1"
    tmux -L "$sock" set-option -t shot status off >/dev/null
    sleep 3
}

# Capture the pane to OUT.png.
shoot() {
    tmux -L "$sock" capture-pane -e -p -t shot > "$work/pane.ansi"
    python3 "$root/scripts/ansi-to-html.py" "$work/pane.ansi" "$work/pane.html" \
        "tankwave serve-editor in neovim"
    "$root/scripts/render-report.sh" "$work/pane.html" "$1" 1260x720 >/dev/null
    echo "$1"
}

# 1. A diagnostic and a hover: the netlist from line 16 on (the wrong unit
#    in view), the cursor on a temperature limit written in degC.
start stage.tank
tmux -L "$sock" send-keys -t shot ":16" Enter "zt"
sleep 0.5
tmux -L "$sock" send-keys -t shot "/125degC" Enter
sleep 0.5
tmux -L "$sock" send-keys -t shot "K"
sleep 2
shoot "$out"

# 2. The figures after a save, as code lenses over the analyze and require
#    lines (neovim 0.7 shows lenses, not inlay hints): save, wait for the
#    solve (a debug build takes several seconds), fetch the lenses.
start clean.tank
tmux -L "$sock" send-keys -t shot ":w" Enter
sleep "${TANKWAVE_SHOT_SOLVE_SECONDS:-15}"
tmux -L "$sock" send-keys -t shot ":lua vim.lsp.codelens.refresh()" Enter
sleep 2
tmux -L "$sock" send-keys -t shot ":16" Enter "zt" ":echo" Enter
sleep 1
shoot "$figures"
