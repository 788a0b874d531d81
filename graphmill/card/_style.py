"""The card's stylesheet and fixed texts."""

CSS = """
:root { --ink: #1f2933; --muted: #5f6b7a; --line: #d9dee5; --accent: #3b6ea8; }
* { box-sizing: border-box; }
body { margin: 0; font: 15px/1.5 system-ui, -apple-system, "Segoe UI", Roboto, sans-serif;
       color: var(--ink); background: #f5f7fa; }
header { background: #1f3a5f; color: #fff; padding: 28px 40px 22px; }
header h1 { margin: 0 0 4px; font-size: 28px; }
header p { margin: 4px 0; color: #dbe4ef; }
nav { background: #fff; border-bottom: 1px solid var(--line); padding: 8px 40px; }
nav a { color: var(--accent); margin-right: 16px; text-decoration: none; font-size: 14px; }
main { max-width: 1200px; margin: 0 auto; padding: 8px 40px 40px; }
section { background: #fff; border: 1px solid var(--line); border-radius: 8px;
          padding: 8px 24px 20px; margin: 20px 0; }
h2 { font-size: 20px; border-bottom: 2px solid var(--accent); padding-bottom: 4px; }
table { border-collapse: collapse; margin: 12px 0; min-width: 50%; }
th, td { text-align: left; padding: 5px 12px; border-bottom: 1px solid var(--line); }
th { background: #eef2f7; font-weight: 600; font-size: 13px; }
td.n { text-align: right; font-variant-numeric: tabular-nums; }
.grid { display: flex; flex-wrap: wrap; gap: 16px; }
figure { margin: 8px 0; }
svg.plot { border: 1px solid var(--line); border-radius: 4px; background: #fff; }
svg .t { font: 600 14px system-ui, sans-serif; fill: #1f2933; }
svg .a { font: 12px system-ui, sans-serif; fill: #1f2933; }
svg .k, svg .l { font: 11px system-ui, sans-serif; fill: #5f6b7a; }
svg .g { stroke: #edf0f4; }
svg .x { stroke: #5f6b7a; }
code, .hash { font: 12px ui-monospace, "DejaVu Sans Mono", monospace; word-break: break-all; }
.note { color: var(--muted); font-size: 13px; }
.verdict { font-weight: 600; }
.verdict.passed { color: #2f7a45; }
.verdict.failed { color: #b0263b; }
.privacy { border-left: 4px solid #e0a030; background: #fff8e8; }
"""

PRIVACY = (
    "Exported graphs often hold personal data: names, contacts, account numbers, device "
    "identifiers, behaviour. You must follow your own organisation's data-protection rules "
    "and policies, and the law that applies to you, when you extract, store and share this "
    "dataset. graphmill extracted only the properties its spec named and never wrote "
    "credentials; this bundle holds whatever the spec asked for, so store and share it "
    "accordingly."
)
