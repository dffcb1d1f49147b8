#!/usr/bin/python3
"""Builds the labeled quality sets from translated message catalogues.

Source text: the gettext catalogues (/usr/share/locale/LANG/LC_MESSAGES/
DOMAIN.mo) of the Debian packages listed in tests/quality/sets.txt, read
with the standard library's gettext module. Every set is English -> LANG.

An entry is a GENUINE translation when all of these hold (the rule the
figures in docs/quality.md rest on):
  G1  it is a singular entry (no plural forms) of a listed catalogue, not the
      header (empty msgid); a message context is removed;
  G2  msgid and msgstr, with every run of white space (newlines, tabs)
      joined to one space and the ends trimmed, are both non-empty and differ;
  G3  the msgid holds a letter outside printf placeholders;
  G4  the msgid is not a message key for translators: a single token that
      starts with a lowercase letter and joins letters with ':', '-' or '_'
      (translator-credits, default:LTR, calendar:week_start:0);
  G5  the pair is not a repeat: the first entry whose two sides, casefolded
      and reduced to their letters and digits, equal an earlier entry's is
      kept, in the order of sets.txt and then of the catalogue.
Negatives are made from genuine entries with a seeded random generator and
labeled by kind (see KINDS). Output, per language LANG:
  LANG.tsv         source TAB target, one pair a line (bytes: bad-bytes lines
                   hold invalid UTF-8 on purpose)
  LANG.labels.tsv  line, label, package, note
and sets.json with the packages, their versions, and the counts.

Wrong-language targets count as such (wrong-lang, wrong-lang-related,
wrong-lang-source) when they hold at least 20 letters in words of their own
(own_letters): shorter ones cannot be told apart by anyone reading so few
words and are labeled wrong-lang-short, reported but not held to a target.
"""

import argparse
import gettext
import json
import os
import random
import re
import subprocess
import sys

HERE = os.path.dirname(os.path.abspath(__file__))
LANGS = ["es", "fr", "it", "pt_BR", "pl", "cs", "ru", "he", "ar", "th", "vi", "zh_TW"]
# Further catalogues used only as wrong-language text.
EXTRA = ["uk", "pt"]
# Languages of one family written in one script: a reader of one can mistake
# the other for it (general linguistic knowledge, not measured).
FAMILY = {"es": "romance", "pt": "romance", "pt_BR": "romance", "it": "romance", "fr": "romance",
          "ru": "east-slavic", "uk": "east-slavic", "cs": "west-slavic", "pl": "west-slavic"}
SAME_LANGUAGE = {"pt": "pt_BR", "pt_BR": "pt"}

KINDS = ["repeat-exact", "repeat-near", "copy", "partial-copy", "wrong-lang", "wrong-lang-related",
         "wrong-lang-source", "wrong-lang-short", "misaligned", "truncated", "bad-bytes", "damaged-markup"]

PRINTF = re.compile(r"%(\d+\$)?[-+ #0']*(\d+|\*)?(\.(\d+|\*))?(hh|h|ll|l|j|z|t|L|q|I64|I32)?[diouxXeEfFgGaAcspnm%]")
KEY = re.compile(r"^[a-z][A-Za-z0-9]*([:_-][A-Za-z0-9]+)+$")


def read_sets():
    rows = []
    with open(os.path.join(HERE, "sets.txt"), encoding="utf-8") as f:
        for line in f:
            line = line.split("#", 1)[0].split()
            if line:
                rows.append({"package": line[0], "domain": line[1], "version": line[2]})
    return rows


def installed_version(pkg):
    try:
        out = subprocess.run(["dpkg-query", "-W", "-f=${Version}", pkg], capture_output=True, text=True)
        return out.stdout.strip() if out.returncode == 0 else None
    except OSError:
        return None


def join_ws(s):
    return " ".join(s.split())


def letters(s):
    return sum(1 for c in PRINTF.sub("", s) if c.isalpha())


SPANS = re.compile(r"<[^<>]{1,200}>|&#?\w{1,10};|\{\{?[^{} ]{0,60}\}\}?|\$\{?[A-Za-z_]\w*\}?")


def own_letters(text, other):
    """Letters of `text` in words of its own: outside placeholders and tags,
    not in options or addresses, not holding digits, not acronyms or
    camel-case names, not words of `other`. A separate, simpler statement
    of the rule the filters use (src/stages/own_text.h)."""
    theirs = set(w.casefold() for w in re.findall(r"\w+", SPANS.sub(" ", PRINTF.sub(" ", other))))
    n = 0
    for tok in SPANS.sub(" ", PRINTF.sub(" ", text)).split():
        if re.match(r"^--?[^\W\d]", tok) or "://" in tok or tok.startswith("www.") or re.search(r"@.*\.", tok):
            continue
        for w in re.findall(r"\w+", tok):
            if any(c.isdigit() for c in w) or w.casefold() in theirs or w.casefold().replace("_", "") in theirs:
                continue
            ascii_letters = [c for c in w if c.isascii() and c.isalpha()]
            if len(ascii_letters) >= 2 and all(c.isupper() for c in ascii_letters) and len(ascii_letters) == sum(
                    c.isalpha() for c in w):
                continue
            if re.search(r"[a-z][A-Z]", w):
                continue
            n += sum(c.isalpha() for c in w)
    return n


def loose(s):
    return "".join(c for c in s.casefold() if c.isalnum())


def catalogue(lang, domain):
    path = "/usr/share/locale/%s/LC_MESSAGES/%s.mo" % (lang, domain)
    if not os.path.exists(path):
        return {}
    with open(path, "rb") as f:
        t = gettext.GNUTranslations(f)
    out = {}
    for k, v in t._catalog.items():
        if not isinstance(k, str) or not k:  # G1: plural entries have tuple keys
            continue
        if isinstance(v, str) and "\x00" in v:
            continue
        src = join_ws(k.split("\x04", 1)[-1])
        tgt = join_ws(v)
        out[src] = tgt
    return out


def genuine(lang, sets):
    seen = set()
    rows = []
    for s in sets:
        cat = catalogue(lang, s["domain"])
        for src, tgt in cat.items():
            if not src or not tgt or src == tgt:  # G2
                continue
            if letters(src) == 0:  # G3
                continue
            if KEY.match(src):  # G4
                continue
            key = (loose(src), loose(tgt))  # G5
            if key in seen:
                continue
            seen.add(key)
            rows.append({"src": src, "tgt": tgt, "package": s["package"], "domain": s["domain"]})
    return rows


BAD = [b"\xff", b"\xc3", b"\x80", b"\xed\xa0\x80", b"\xc0\xaf", b"\xe2\x82"]
TAGS = ["b", "i", "span", "a", "em", "strong", "tt", "u"]


def make(lang, sets, others, rng, limit, per_kind):
    pos = genuine(lang, sets)
    rng.shuffle(pos)
    if limit:
        pos = pos[:limit]
    n = len(pos)
    lines = []  # (order key, src bytes, tgt bytes, label, package, note)

    def add(order, src, tgt, label, row, note=""):
        enc = lambda x: x if isinstance(x, bytes) else x.encode("utf-8")
        lines.append((order, enc(src), enc(tgt), label, row["package"], note))

    for i, r in enumerate(pos):
        add(float(i), r["src"], r["tgt"], "genuine", r)

    def pick(pred, k):
        idx = [i for i in range(n) if pred(pos[i])]
        rng.shuffle(idx)
        return idx[:k]

    def later(i):  # a place after line i
        return rng.uniform(i + 0.01, n)

    for i in pick(lambda r: True, per_kind):
        add(later(i), pos[i]["src"], pos[i]["tgt"], "repeat-exact", pos[i])
    for i in pick(lambda r: True, per_kind):
        r = pos[i]
        how = rng.randrange(3)
        src, tgt = r["src"], r["tgt"]
        if how == 0:
            tgt = tgt[:1].swapcase() + tgt[1:] if tgt[:1].swapcase() != tgt[:1] else tgt + "."
        elif how == 1:
            tgt = tgt[:-1] if tgt.endswith(".") else tgt + "."
        else:
            src = src.replace(" ", "  ", 1) + (" " if rng.random() < 0.5 else "")
        add(later(i), src, tgt, "repeat-near", r, "variant %d" % how)
    for i in pick(lambda r: True, per_kind):
        add(rng.uniform(0, n), pos[i]["src"], pos[i]["src"], "copy", pos[i])
    for i in pick(lambda r: len(r["src"].split()) >= 4, per_kind):
        r = pos[i]
        w = r["src"].split()
        t = r["tgt"].split()
        k = rng.randrange(len(w))
        w[k] = t[min(k, len(t) - 1)]
        add(rng.uniform(0, n), r["src"], " ".join(w), "partial-copy", r)

    # Wrong language: another catalogue's translation of the same msgid.
    def wrong(kind, choose, min_letters, max_letters):
        made = 0
        for i in pick(lambda r: True, n):
            if made >= per_kind:
                break
            r = pos[i]
            cands = choose()
            rng.shuffle(cands)
            for other in cands:
                t = others[other].get(r["domain"], {}).get(r["src"])
                if not t or t == r["src"] or loose(t) == loose(r["tgt"]):
                    continue
                nl = own_letters(t, r["src"])
                if nl < min_letters or nl > max_letters:
                    continue
                add(rng.uniform(0, n), r["src"], t, kind, r, other)
                made += 1
                break

    base = SAME_LANGUAGE.get(lang, lang)
    related = [o for o in others if o not in (lang, base) and FAMILY.get(o) and FAMILY.get(o) == FAMILY.get(lang)]
    unrelated = [o for o in others if o not in (lang, base) and (not FAMILY.get(o) or FAMILY.get(o) != FAMILY.get(lang))]
    wrong("wrong-lang", lambda: list(unrelated), 20, 10**9)
    if related:
        wrong("wrong-lang-related", lambda: list(related), 20, 10**9)
    # The source language in the target: another entry's English text.
    for i in pick(lambda r: True, per_kind):
        j = rng.randrange(n)
        if own_letters(pos[j]["src"], pos[i]["src"]) >= 20 and loose(pos[j]["src"]) != loose(pos[i]["src"]):
            add(rng.uniform(0, n), pos[i]["src"], pos[j]["src"], "wrong-lang-source", pos[i], "source of another entry")
    wrong("wrong-lang-short", lambda: list(related or unrelated), 1, 19)

    for i in pick(lambda r: True, per_kind):
        j = rng.randrange(n)
        if loose(pos[j]["tgt"]) != loose(pos[i]["tgt"]):
            add(rng.uniform(0, n), pos[i]["src"], pos[j]["tgt"], "misaligned", pos[i], "target of another entry")
    for i in pick(lambda r: len(r["tgt"]) >= 24, per_kind):
        t = pos[i]["tgt"]
        cut = int(len(t) * rng.uniform(0.3, 0.6))
        sp = t.rfind(" ", 0, cut)
        add(rng.uniform(0, n), pos[i]["src"], t[: sp if sp > 0 else cut].rstrip(), "truncated", pos[i])
    for i in pick(lambda r: True, per_kind):
        r = pos[i]
        side = rng.randrange(2)
        b = (r["src"] if side == 0 else r["tgt"]).encode("utf-8")
        at = rng.randrange(len(b) + 1)
        while at < len(b) and (b[at] & 0xC0) == 0x80:  # between characters
            at += 1
        b = b[:at] + rng.choice(BAD) + b[at:]
        add(rng.uniform(0, n), b if side == 0 else r["src"], r["tgt"] if side == 0 else b, "bad-bytes", r,
            "source" if side == 0 else "target")
    # Damaged markup: one side carries markup the other lacks, or a tag is
    # left open or cut short.
    for i in pick(lambda r: len(r["src"].split()) >= 2 and len(r["tgt"].split()) >= 2, per_kind):
        r = pos[i]
        tag = rng.choice(TAGS)
        ws, wt = r["src"].split(" "), r["tgt"].split(" ")
        how = rng.randrange(3)
        ws[0] = "<%s>%s</%s>" % (tag, ws[0], tag)
        if how == 0:
            pass  # markup on the source only
        elif how == 1:
            wt[0] = "<%s>%s" % (tag, wt[0])  # closing tag lost
        else:
            wt[0] = "<%s>%s</%s" % (tag, wt[0], tag)  # tag cut short
        add(rng.uniform(0, n), " ".join(ws), " ".join(wt), "damaged-markup", r, "variant %d" % how)

    lines.sort(key=lambda x: x[0])
    return lines, len(pos)


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--out", required=True)
    ap.add_argument("--langs", default=",".join(LANGS))
    ap.add_argument("--limit", type=int, default=0, help="genuine pairs per language (0: all)")
    ap.add_argument("--per-kind", type=int, default=200, help="negatives of each kind per language")
    ap.add_argument("--seed", type=int, default=13)
    a = ap.parse_args()
    sets = read_sets()
    versions = []
    for s in sets:
        v = installed_version(s["package"])
        versions.append({"package": s["package"], "domain": s["domain"], "pinned": s["version"], "installed": v})
        if v != s["version"]:
            print("note: %s is %s here, the figures were measured with %s" % (s["package"], v, s["version"]),
                  file=sys.stderr)
    os.makedirs(a.out, exist_ok=True)
    langs = a.langs.split(",")
    others = {o: {s["domain"]: catalogue(o, s["domain"]) for s in sets} for o in LANGS + EXTRA}
    counts = {}
    for lang in langs:
        rng = random.Random("%d:%s" % (a.seed, lang))
        lines, npos = make(lang, sets, others, rng, a.limit, a.per_kind)
        if npos == 0:
            print("error: no catalogue text for %s; install the packages of tests/quality/sets.txt" % lang,
                  file=sys.stderr)
            return 3
        with open(os.path.join(a.out, lang + ".tsv"), "wb") as f, \
                open(os.path.join(a.out, lang + ".labels.tsv"), "w", encoding="utf-8") as g:
            for k, (_, src, tgt, label, pkg, note) in enumerate(lines, 1):
                f.write(src + b"\t" + tgt + b"\n")
                g.write("%d\t%s\t%s\t%s\n" % (k, label, pkg, note))
        c = {}
        for x in lines:
            c[x[3]] = c.get(x[3], 0) + 1
        counts[lang] = c
    with open(os.path.join(a.out, "sets.json"), "w", encoding="utf-8") as f:
        json.dump({"seed": a.seed, "limit": a.limit, "per_kind": a.per_kind, "packages": versions,
                   "counts": counts}, f, indent=1)
    return 0


if __name__ == "__main__":
    sys.exit(main())
