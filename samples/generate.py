#!/usr/bin/env python3
"""Builds the sample corpus of the invented Ribera Alta Botanical Garden.

Reads the hand-written pairs in base-pairs.tsv, adds pairs composed from the
small templates below, then writes garden-en-es.tsv: the clean pairs mixed
with damage of the kinds a scraped corpus has, at fixed rates. Seeded, so the
same script always writes the same bytes:  python3 samples/generate.py
The counts of each kind are printed and written to samples/damage-counts.json.
"""
import itertools
import json
import os
import random

HERE = os.path.dirname(os.path.abspath(__file__))
SEED = 20261201

# Composed pairs: (English template, Spanish template) and slot fillers.
PLANTS = [("tomato", "tomate"), ("bean", "judía"), ("pumpkin", "calabaza"), ("lettuce", "lechuga"),
          ("pepper", "pimiento"), ("onion", "cebolla"), ("garlic", "ajo"), ("chickpea", "garbanzo"),
          ("lentil", "lenteja"), ("melon", "melón"), ("aubergine", "berenjena"), ("courgette", "calabacín"),
          ("sunflower", "girasol"), ("marigold", "caléndula"), ("lavender", "lavanda"), ("basil", "albahaca")]
AREAS = [("north terrace", "la terraza norte"), ("walled garden", "el huerto amurallado"),
         ("old orchard", "el huerto viejo"), ("teaching beds", "los bancales de enseñanza"),
         ("south slope", "la ladera sur"), ("river meadow", "el prado del río")]
DAYS = [("Monday", "lunes"), ("Tuesday", "martes"), ("Wednesday", "miércoles"), ("Thursday", "jueves"),
        ("Friday", "viernes"), ("Saturday", "sábado"), ("Sunday", "domingo")]
HOURS = [("ten", "diez"), ("eleven", "once"), ("four", "cuatro"), ("five", "cinco"), ("six", "seis")]
TOPICS = [("seed saving", "conservación de semillas"), ("composting", "compostaje"),
          ("pruning", "poda"), ("watering", "riego"), ("soil care", "cuidado del suelo")]
GUIDES = ["Amaia", "Bruno", "Carmela", "Darío", "Elena", "Fermín", "Gloria", "Hugo", "Irene", "Julián",
          "Lucía", "Mateo"]
TEMPLATES = [
    (lambda r: "{0} leads the {1} walk on {2}.".format(*r),
     lambda r: "{0} dirige el paseo de {1} del {2}.".format(*r), [[(g, g) for g in GUIDES], TOPICS, DAYS]),
    (lambda r: "{0} plants from the {1} are for sale on {2}.".format(r[0].capitalize(), r[1], r[2]),
     lambda r: "Las plantas de {0} de {1} se venden el {2}.".format(*r), [PLANTS, AREAS, DAYS]),
    (lambda r: "The {0} seedlings need water every {1}.".format(*r),
     lambda r: "Los plantones de {0} necesitan agua cada {1}.".format(*r), [PLANTS, DAYS]),
    (lambda r: "The {0} cannot be visited on {1} because of planting.".format(*r),
     lambda r: "No se puede visitar {0} el {1} por la plantación.".format(*r), [AREAS, DAYS]),
    (lambda r: "The {0} bed is in the {1}.".format(*r), lambda r: "El bancal de {0} está en {1}.".format(*r),
     [PLANTS, AREAS]),
    (lambda r: "{0} seeds are back in the seed library.".format(r[0].capitalize()),
     lambda r: "Las semillas de {0} vuelven a estar en la biblioteca de semillas.".format(r[0]), [PLANTS]),
    (lambda r: "The {0} workshop is on {1} at {2}.".format(*r),
     lambda r: "El taller de {0} es el {1} a las {2}.".format(*r), [TOPICS, DAYS, HOURS]),
    (lambda r: "On {0} the visitor centre closes at {1}.".format(*r),
     lambda r: "El {0} el centro de visitantes cierra a las {1}.".format(*r), [DAYS, HOURS]),
]


def composed(rng):
    out = []
    for en_t, es_t, slots in TEMPLATES:
        for picks in itertools.product(*slots):
            out.append((en_t([p[0] for p in picks]), es_t([p[1] for p in picks]).replace(" de el ", " del ")))
    out = sorted(set(out))
    rng.shuffle(out)
    return sorted(out[:1250])


# Third-language lines: French and German versions of garden notices,
# written for this sample.
FRENCH = [
    "Le jardin ouvre à neuf heures du matin et ferme au coucher du soleil.",
    "Merci de rester sur les chemins balisés pendant toute la visite.",
    "Les visites guidées partent de la porte principale toutes les heures.",
    "La bibliothèque de semences prête des graines aux jardiniers du quartier.",
    "Les chiens doivent être tenus en laisse dans tout le jardin.",
    "La serre est fermée cette semaine pour des travaux de réparation.",
    "Le café sert des repas chauds de midi à quinze heures.",
    "Les bénévoles se retrouvent chaque samedi matin devant le centre.",
    "Il est interdit de cueillir les fleurs et les fruits du verger.",
    "Le concert du soir aura lieu sur la grande pelouse du jardin.",
]
GERMAN = [
    "Der Garten öffnet um neun Uhr morgens und schließt bei Sonnenuntergang.",
    "Bitte bleiben Sie während des ganzen Besuchs auf den markierten Wegen.",
    "Die Führungen beginnen jede Stunde am Haupteingang des Gartens.",
    "Hunde müssen im gesamten Garten an der kurzen Leine geführt werden.",
    "Das Gewächshaus ist diese Woche wegen Reparaturarbeiten geschlossen.",
    "Freiwillige treffen sich jeden Samstag um acht Uhr vor dem Besucherzentrum.",
]
CYRILLIC = ["Сад открывается в девять часов утра.", "Пожалуйста, не срывайте цветы.",
            "Экскурсии начинаются у главных ворот."]
GREEK = ["Ο κήπος ανοίγει στις εννέα το πρωί.", "Παρακαλούμε μην κόβετε τα λουλούδια."]

FULLWIDTH = {c: chr(ord(c) + 0xFEE0) for c in "ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789"}
DECOMPOSE = {"á": "a\u0301", "é": "e\u0301", "í": "i\u0301", "ó": "o\u0301", "ú": "u\u0301", "ñ": "n\u0303"}


def main():
    rng = random.Random(SEED)
    with open(os.path.join(HERE, "base-pairs.tsv"), encoding="utf-8") as f:
        hand = [tuple(line.rstrip("\n").split("\t")) for line in f if line.strip()]
    base = hand + composed(rng)
    counts = {}
    rows = []  # (bytes of the line without newline, kind)

    def add(kind, en, es, n=1):
        for _ in range(n):
            rows.append(((en + "\t" + es).encode("utf-8"), kind))
            counts[kind] = counts.get(kind, 0) + 1

    def add_raw(kind, raw):
        rows.append((raw, kind))
        counts[kind] = counts.get(kind, 0) + 1

    for en, es in base:
        add("clean", en, es)
    # Kept after normalization (the pair is repaired, not dropped).
    for _ in range(40):
        en, es = rng.choice(base)
        add("odd whitespace and invisible characters", en.replace(" ", rng.choice(["  ", "\u00a0", " \u200b", "\u3000", " \u2029 "]), 2),
            "\u200e" + es + rng.choice([" ", "\u00a0", "\u2028", "\x07"]))
    for _ in range(30):
        en, es = rng.choice(base)
        add("decomposed accents (NFD)", en, "".join(DECOMPOSE.get(c, c) for c in es))
    for _ in range(15):
        en, es = rng.choice(base)
        words = en.split(" ")
        words[0] = "".join(FULLWIDTH.get(c, c) for c in words[0])
        add("full-width letters", " ".join(words), es)
    for _ in range(40):
        en, es = rng.choice(base)
        tag = rng.choice(["p", "b", "span class=\"notice\"", "div", "li"])
        close = tag.split(" ")[0]
        add("HTML markup", "<%s>%s</%s>" % (tag, en, close), "<%s>%s</%s>&nbsp;" % (tag, es, close))
    # Dropped.
    for _ in range(450):
        add("exact duplicate", *rng.choice(base))
    for _ in range(60):
        en, es = rng.choice(base)
        v = rng.randrange(3)
        if v == 0:
            en, es = en.upper(), es.upper()
        elif v == 1:
            en, es = en.rstrip(".?") + " !", es.rstrip(".?") + "!!"
        else:
            en, es = en.lower(), es.lower()
        add("near duplicate (case, punctuation)", en, es)
    for _ in range(60):
        en, _es = rng.choice(base)
        add("untranslated (target copies source)", en, en)
    for _ in range(15):
        en, _es = rng.choice(base)
        add("untranslated with small edits", en, en.replace("the ", "the  ").rstrip(".") + " .")
    for s in FRENCH:
        add("third language (French target)", rng.choice(base)[0], s)
        add("third language (French target)", rng.choice(base)[0], s)
    for s in GERMAN:
        add("third language (German source)", s, rng.choice(base)[1])
    for s in CYRILLIC + GREEK:
        add("wrong script (Cyrillic or Greek target)", rng.choice(base)[0], s)
    for _ in range(12):
        en, es = rng.choice(base)
        add("sides swapped (Spanish source, English target)", es + " " + rng.choice(base)[1], en + " " + rng.choice(base)[0])
    for _ in range(12):
        en, es = rng.choice(base)
        add("URL", en + " More at https://ribera-alta-garden.example/visit", es + " Más en https://ribera-alta-garden.example/visita")
    for _ in range(6):
        en, es = rng.choice(base)
        add("e-mail address", en + " Write to friends.garden@example.org", es + " Escriba a friends.garden@example.org")
    for _ in range(25):
        en, es = rng.choice(base)
        if rng.random() < 0.5:
            add("empty side", en, rng.choice(["", " ", "\u00a0"]))
        else:
            add("empty side", "", es)
    for _ in range(6):
        add("empty line", "", "")
    for _ in range(10):
        picks = [rng.choice(base) for _ in range(45)]
        add("overlong (a whole page on one line)", " ".join(p[0] for p in picks), " ".join(p[1] for p in picks))
    for _ in range(20):
        en, es = rng.choice(base)
        picks = [rng.choice(base) for _ in range(6)]
        add("mismatched lengths", en, es + " " + " ".join(p[1] for p in picks))
    for _ in range(8):
        en, es = rng.choice(base)
        junk = "".join(rng.choice("ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/") for _ in range(80))
        add("run-together junk (base64)", en + " " + junk, es + " " + junk)
    for _ in range(15):
        en, es = rng.choice(base)
        bad = rng.choice([b"\xff", b"\xc3\x28", b"\xe2\x82", b"\xed\xa0\x80", b"\xc0\xaf", b"\x80"])
        raw = (en + "\t").encode() + es.encode()[:8] + bad + es.encode()[8:]
        add_raw("invalid UTF-8", raw)
    for _ in range(6):
        en, es = rng.choice(base)
        add_raw("no tab", (en + " " + es).encode())
    for _ in range(4):
        en, es = rng.choice(base)
        add_raw("extra tab", (en + "\t" + es + "\t" + es).encode())
    for _ in range(3):
        en, es = rng.choice(base)
        add_raw("NUL byte", (en + "\t" + es).encode().replace(b" ", b"\x00", 1))

    rng.shuffle(rows)
    # A handful of Windows line endings, and a byte-order mark at the start.
    out = bytearray(b"\xef\xbb\xbf")
    for i, (raw, _kind) in enumerate(rows):
        out += raw + (b"\r\n" if i % 97 == 5 else b"\n")
    with open(os.path.join(HERE, "garden-en-es.tsv"), "wb") as f:
        f.write(out)
    counts["total lines"] = len(rows)
    counts["distinct clean base pairs"] = len(base)
    with open(os.path.join(HERE, "damage-counts.json"), "w", encoding="utf-8") as f:
        json.dump(counts, f, indent=2, ensure_ascii=False)
        f.write("\n")
    for k, v in counts.items():
        print("%6d  %s" % (v, k))


if __name__ == "__main__":
    main()
