#!/usr/bin/python3
"""Writes the three invented corpora of the Puerto Lindo ferry example
(pipelines/multi-corpus.toml). Seeded: the same bytes every time.

  notices.tsv            reviewed translations of the ferry line's notices (TSV)
  web.en, web.es         its website, scraped and aligned line by line
  timetable.jsonl        timetable lines from the booking system (JSON Lines)

The web copy repeats some reviewed notices exactly and some with other
punctuation and case or a boilerplate prefix; the timetable repeats a few
web lines. Nothing here comes from a real company.
"""
import json
import random
import os

rng = random.Random(20261202)
here = os.path.dirname(os.path.abspath(__file__))

PORTS = [("Puerto Lindo", "Puerto Lindo"), ("Isla Garza", "Isla Garza"), ("Cala Honda", "Cala Honda"),
         ("Punta Sal", "Punta Sal"), ("Los Arcos", "Los Arcos")]
DAYS = [("Monday", "lunes"), ("Tuesday", "martes"), ("Wednesday", "miércoles"), ("Thursday", "jueves"),
        ("Friday", "viernes"), ("Saturday", "sábado"), ("Sunday", "domingo")]
THINGS = [("bicycles", "bicicletas"), ("dogs on a lead", "perros con correa"), ("surfboards", "tablas de surf"),
          ("prams", "carritos de bebé"), ("kayaks", "kayaks")]

NOTICES = [
    ("Tickets can be changed free of charge until one hour before departure.",
     "Los billetes se pueden cambiar sin coste hasta una hora antes de la salida."),
    ("Please arrive at the quay twenty minutes before your ferry leaves.",
     "Llegue al muelle veinte minutos antes de la salida de su ferry."),
    ("In strong wind the morning crossings may be cancelled.",
     "Con viento fuerte pueden cancelarse las travesías de la mañana."),
    ("Children under four travel free with an adult.",
     "Los niños menores de cuatro años viajan gratis con un adulto."),
    ("The café on the upper deck opens half an hour after departure.",
     "La cafetería de la cubierta superior abre media hora después de la salida."),
    ("Lost property is kept at the ticket office for thirty days.",
     "Los objetos perdidos se guardan en la taquilla durante treinta días."),
    ("Life jackets are stored under every seat.",
     "Hay chalecos salvavidas debajo de cada asiento."),
    ("Cars must be parked in the marked lanes before boarding.",
     "Los coches deben aparcar en los carriles marcados antes de embarcar."),
]


def notices():
    out = list(NOTICES)
    for (en_a, es_a) in PORTS:
        for (en_t, es_t) in THINGS:
            out.append((f"Ferries to {en_a} carry {en_t} at no extra cost.",
                        f"Los ferris a {es_a} llevan {es_t} sin coste adicional."))
    for (en_a, es_a) in PORTS:
        for (en_d, es_d) in DAYS:
            out.append((f"The ticket office at {en_a} is closed on {en_d} afternoons.",
                        f"La taquilla de {es_a} cierra los {es_d} por la tarde."))
    return out


def web(reviewed):
    out = []
    for i in range(140):
        a, b = rng.sample(PORTS, 2)
        d = rng.choice(DAYS)
        h = rng.randint(6, 21)
        out.append((f"Crossing {100 + i}: {a[0]} to {b[0]} at {h}:{rng.choice(['00', '15', '30', '45'])}, "
                    f"{d[0]} only, weather permitting.",
                    f"Travesía {100 + i}: de {a[1]} a {b[1]} a las {h}:{rng.choice(['00', '15', '30', '45'])}, "
                    f"solo los {d[1]}, si el tiempo lo permite."))
    # The reviewed notices again: exactly, and as the site shows them.
    for en, es in reviewed[:8]:
        out.append((en, es))
    for en, es in reviewed[8:14]:
        out.append((en.upper().rstrip(".") + "!!", es.rstrip(".") + " !"))
    for en, es in reviewed[14:18]:
        out.append(("Important notice: " + en, "Aviso importante: " + es))
    # Untranslated menu lines a scraper picks up.
    for en in ["Home", "Timetables", "Book now", "Contact us"]:
        out.append((en, en))
    rng.shuffle(out)
    return out


def timetable(web_pairs):
    out = []
    for i in range(60):
        a, b = rng.sample(PORTS, 2)
        d = rng.choice(DAYS)
        out.append({"id": f"T{i:03d}", "en": f"Extra summer ferry from {a[0]} to {b[0]} every {d[0]} in August.",
                    "es": f"Ferry extra de verano de {a[1]} a {b[1]} cada {d[1]} en agosto."})
    for en, es in web_pairs[:4]:
        out.append({"id": "W", "en": en, "es": es})
    return out


reviewed = notices()
web_pairs = web(reviewed)
with open(os.path.join(here, "notices.tsv"), "w", encoding="utf-8") as f:
    for en, es in reviewed:
        f.write(f"{en}\t{es}\n")
with open(os.path.join(here, "web.en"), "w", encoding="utf-8") as fe, \
        open(os.path.join(here, "web.es"), "w", encoding="utf-8") as fs:
    for en, es in web_pairs:
        fe.write(en + "\n")
        fs.write(es + "\n")
with open(os.path.join(here, "timetable.jsonl"), "w", encoding="utf-8") as f:
    for row in timetable(web_pairs):
        f.write(json.dumps(row, ensure_ascii=False) + "\n")
