#!/usr/bin/env python3
"""Generate a second invented text of the demo scenario: the daily logbook a hut warden keeps
(one entry per line: date, weather reading, guests, chores, notes), a register unlike the
pager messages. It is the small "product text" of the fine-tuning check: about 30 KB to train
on and 8 KB held out, from different seeds.

Standard library only and deterministic:

    python3 data/scenario/logbook.py     # writes logbook-train.txt and logbook-heldout.txt

Every name and place is invented (the lists of generate.py).
"""

import random
from pathlib import Path

from generate import VOCAB

TRAIN_SEED = 7301
HELDOUT_SEED = 7302
TRAIN_BYTES = 30_000
HELDOUT_BYTES = 8_000

MONTHS = ["Jun", "Jul", "Aug", "Sep"]
SKY = ["clear", "high cloud", "overcast", "fog until noon", "showers", "thunder after 16:00",
       "light snow", "wind from the west", "cloud on the ridge"]
CHORES = [
    "cleaned the water filter", "split wood for the stove", "checked the gas stock ({n} full)",
    "swept the dormitory", "tested the radio at {t}", "refilled the first-aid kit",
    "dug out the drain by the door", "aired the blankets", "counted the tinned food ({n} tins)",
    "charged the spare batteries", "checked the defibrillator pads", "fixed the door latch",
    "burned the paper waste", "emptied the rain gauge ({mm} mm)",
]
NOTES = [
    "{name} came up from the valley with bread.", "Party of {n} left for {place} at {t}.",
    "Two guests turned back below {place}.", "Marker poles on the {place} path need paint.",
    "Ordered {n} canisters of gas for the next drop.", "Quiet day.", "Helicopter drop at {t}.",
    "Guest with a sprained ankle, strapped, walked down with {name}.",
    "Snow patch on the traverse still hard in the morning.", "Water tank half full.",
    "{name} from {hut} called about the booking.", "Stove draws badly in the west wind.",
]


def entry(rng, day):
    fill = {
        "n": rng.randint(2, 14), "t": f"{rng.randint(6, 19):02}:{rng.choice(['00', '15', '30', '45'])}",
        "mm": rng.randint(0, 30), "name": rng.choice(VOCAB["name"]),
        "place": rng.choice(VOCAB["place"]), "hut": rng.choice(VOCAB["hut"]),
    }
    month, date = MONTHS[day // 30 % 4], day % 30 + 1
    chores = rng.sample(CHORES, rng.randint(1, 3))
    parts = [
        f"{date} {month}: {rng.randint(-4, 16)} C at 07:00, {rng.choice(SKY)}.",
        f"{rng.randint(0, 38)} guests, {rng.randint(0, 9)} booked for tonight.",
        ", ".join(chores).capitalize() + ".",
        rng.choice(NOTES),
    ]
    return " ".join(parts).format(**fill)


def generate(seed, size):
    rng = random.Random(seed)
    lines, total, day = [], 0, rng.randint(0, 119)
    while total < size:
        line = entry(rng, day)
        lines.append(line)
        total += len(line) + 1
        day += 1
    return "".join(line + "\n" for line in lines)


def main():
    here = Path(__file__).resolve().parent
    for name, seed, size in [("logbook-train.txt", TRAIN_SEED, TRAIN_BYTES),
                             ("logbook-heldout.txt", HELDOUT_SEED, HELDOUT_BYTES)]:
        (here / name).write_text(generate(seed, size), encoding="ascii")
        print(f"wrote {name}: {(here / name).stat().st_size} bytes")


if __name__ == "__main__":
    main()
