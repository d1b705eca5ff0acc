#!/usr/bin/env python3
"""Writes escapes.jsonl and escapes.want for TestExtractMatchesPythonJSON.

The expected text parts come from CPython's json module (json.loads), used as
an independent JSON decoder. Each line of escapes.want is a JSON array of the
hex-encoded UTF-8 bytes of the parts of the same line of escapes.jsonl, for
the field spec "text,turns[]". Run: python3 gen_escapes.py
"""
import json

values = [
    "plain ascii",
    "quote \" backslash \\ slash / tab \t newline \n cr \r",
    "backspace \b formfeed \f",
    "controls \x00 \x01 \x1f",
    "latin é É ß, euro €, cjk 日本語",
    "astral 😀 𝄞 🀄",
    "mixed\u2028line\u2029sep",
    "",
    " leading and trailing ",
]

lines = []
for v in values:
    lines.append(json.dumps({"text": v}, ensure_ascii=True))
    lines.append(json.dumps({"text": v}, ensure_ascii=False))
lines.append(json.dumps({"text": "a", "turns": values}, ensure_ascii=True))
lines.append(json.dumps({"turns": ["x", None, "y"], "text": "t"}, ensure_ascii=False))
# Written by hand: escapes json.dumps never emits.
lines += [
    r'{"text":"\/\u00C9\u00e9\uD83D\uDE00"}',
    r'{"t\u0065xt":"escaped key"}',
    r'{"text" : "spaced" , "turns" : [ "a" , "b" ] }',
    r'{"text":"\"\\\"\\"}',
]

with open("escapes.jsonl", "w", encoding="utf-8", newline="\n") as f:
    for line in lines:
        f.write(line + "\n")

with open("escapes.want", "w", encoding="utf-8", newline="\n") as f:
    for line in lines:
        obj = json.loads(line)
        parts = []
        if obj.get("text") is not None:
            parts.append(obj["text"])
        parts += [p for p in obj.get("turns") or [] if p is not None]
        f.write(json.dumps([p.encode("utf-8").hex() for p in parts]) + "\n")
