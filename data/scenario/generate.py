#!/usr/bin/env python3
"""Generate the invented demo text: pager messages between the wardens of the
Tesseral Range huts and the Aldwen Valley rescue team.

Standard library only and fully deterministic (fixed seeds), so the committed
train.txt and heldout.txt can be rebuilt byte for byte:

    python3 generate.py            # writes train.txt and heldout.txt next to this file
    python3 generate.py --out-dir DIR

Every name and place below is invented.
"""

import argparse
import random
import re
import zlib
from pathlib import Path

TRAIN_SEED = 20261201
HELDOUT_SEED = 4051
TRAIN_TARGET_BYTES = 420_000
HELDOUT_TARGET_BYTES = 30_000
# The demo pager takes messages of up to 200 characters; longer drafts are redrawn.
MAX_MESSAGE_BYTES = 200
# One (template, hut or place) combination in this many is kept out of train, so part
# of the held-out text combines familiar phrasing with unfamiliar pairings.
RESERVED_ONE_IN = 4

# Word lists. A value may itself contain {slots}; a slot keeps one value for the
# whole message (so a message about a hut stays about that hut). Slots named
# with a digit suffix (hut2, name3) draw a different value of the same list.
VOCAB = {
    "hut": [
        "Harrowmere Hut", "Tamsel Hut", "Ulvenholt Hut", "Brackwater Hut",
        "Fenrow Hut", "Cassby Hut", "Orlan Bivouac", "Sallowby Hut",
        "Mirrin Hut", "Dunmallow Hut", "Elvaran Refuge", "Pendrick Hut",
    ],
    "place": [
        "Stannet Col", "Wendle Saddle", "Hobbin Pass", "Pellory Notch",
        "the Ferrule Glacier", "Ondle Tarn", "Cresset Peak", "the Fenrow Tooth",
        "Lunder Ford", "Tarrow Spur", "the Amberlith Pass", "the Mirrin lakes",
    ],
    "path": [
        "the traverse from {hut} to {hut2}", "the scree path below {place}",
        "the ladder section above {hut}", "the glacier crossing on the Ferrule Glacier",
        "the forest track from Lunder Ford", "the chain section on Tarrow Spur",
        "the footbridge at Lunder Ford", "the zigzags up to {place}",
        "the old mule track", "the ridge path to Cresset Peak",
        "the lower path along Ondle Tarn", "the winter route to {hut2}",
        "the shortcut past the old quarry", "the path over {place}",
    ],
    "name": [
        "Maren", "Tobin", "Idris", "Elsa", "Rafe", "Nadia", "Oskar", "Lio",
        "Greta", "Anselm", "Bryn", "Corinne", "Dario", "Esme", "Fenna", "Hugo",
        "Ines", "Jory", "Katrin", "Milo", "Petra", "Silas", "Ula", "Wren",
    ],
    "team": [
        "Rescue 1", "Rescue 2", "Rescue 3", "Rescue 4", "the dog team",
        "the stretcher team", "the helicopter crew", "Aldwen Base",
    ],
    "day": [
        "tomorrow", "tomorrow morning", "Monday", "Tuesday", "Wednesday",
        "Thursday", "Friday", "Saturday", "Sunday", "the weekend",
    ],
    "month": [
        "January", "February", "March", "April", "May", "June", "July",
        "August", "September", "October", "November", "December",
    ],
    "wdir": [
        "north", "north east", "east", "south east", "south", "south west",
        "west", "north west",
    ],
    "forecast": [
        "sunny morning, cloud building after noon",
        "snow showers, wind easing in the evening",
        "fog in the valleys, clear above {alt} m",
        "strong south wind and rising temperatures",
        "steady rain until midday, then brighter",
        "cold and clear, light wind from the {wdir}",
        "storms likely after {later}",
        "cloudy with some drizzle, freezing level near {alt} m",
    ],
    "cond": [
        "icy in the shade", "clear and dry", "muddy but fine",
        "under deep snow above {alt} m", "washed out near the second bridge",
        "passable with care", "blocked by a fallen tree",
        "closed after a rockfall", "slippery after the rain",
        "hard snow in the morning and soft after noon",
        "well trodden and easy to follow", "hard to follow in the fog",
    ],
    "advice": [
        "crampons needed before {time}", "poles recommended",
        "not for groups with children", "take the lower path instead",
        "allow an extra hour", "please tell the parties at {hut2}",
        "start early and turn back by {later}", "go slowly on the steep part",
    ],
    "sq": [
        "{r_q} kg of flour", "{r_q} canisters of gas", "{r_q} packs of batteries",
        "{r_q} litres of lamp oil", "{r_q} boxes of tea bags", "{r_q} kg of rice",
        "{r_q} kg of oats", "{r_q} packs of bandages",
        "{r_q} rolls of toilet paper", "{r_q} bags of coffee",
        "{r_q} trays of eggs", "{r_q} kg of sugar", "{r_q} loaves of bread",
        "{r_q} tins of tomatoes", "{r_q} kg of lentils", "{r_q} packets of soup",
        "{r_q} bars of soap", "{r_q} bottles of disinfectant",
        "{r_q} boxes of matches", "{r_q} kg of pasta",
    ],
    "supply": [
        "flour", "gas", "batteries", "lamp oil", "tea", "rice", "oats",
        "bandages", "toilet paper", "coffee", "eggs", "sugar", "bread",
        "lentils", "soup", "soap", "matches", "pasta", "dried milk", "cheese",
    ],
    "eq": [
        "the radio", "the defibrillator", "the stretcher", "the vacuum mattress",
        "the oxygen set", "the avalanche probes", "the head torches",
        "the satellite phone", "the generator", "the water pump",
        "the first aid kit", "the spare pager", "the solar charger",
        "the rope bag",
    ],
    "fault": [
        "the radio needs a new antenna", "the generator needs a new fuel hose",
        "the water pump needs a new seal", "the stretcher needs a new strap",
        "the oxygen set needs a new valve", "the solar charger needs a new cable",
        "the satellite phone needs a new battery", "the defibrillator needs new pads",
        "the head torches need new batteries", "the generator needs a new spark plug",
        "the vacuum mattress has a slow leak", "the spare pager will not charge",
    ],
    "spare": [
        "a spare battery for the satellite phone", "a spare antenna for the radio",
        "spare pads for the defibrillator", "a new seal for the water pump",
        "a spare strap for the stretcher", "a spare fuse for the generator",
        "a charger for the pagers", "a repair kit for the vacuum mattress",
        "two spare head torches", "a new hose for the generator",
    ],
    "person": ["woman", "man", "walker", "climber", "guide"],
    "child": ["boy", "girl"],
    "injury": [
        "a twisted ankle", "a suspected broken wrist", "mild hypothermia",
        "a deep cut to the left hand", "a headache and nausea from the altitude",
        "a knee injury after a fall on scree", "blisters and exhaustion",
        "a bee sting and some swelling", "a painful shoulder after a slip on ice",
        "chest pain on the climb", "a sprained knee", "a head wound after a fall",
        "a badly bruised hip", "sunburn and dehydration",
    ],
    "treatment": [
        "Splinted and given painkillers", "Warmed in a sleeping bag with hot drinks",
        "Wound cleaned and dressed", "Rested and given fluids",
        "Arm in a sling with an ice pack", "Wound closed with strips and covered",
        "Kept warm and lying down", "Given sugar and water, now resting",
    ],
    "obs": [
        "pulse {pulse}, breathing normal", "alert and talking",
        "able to walk slowly", "cannot bear weight", "temperature {btemp} C",
        "pain {pain} out of 10", "no loss of consciousness",
        "colour is better now", "asking for food",
    ],
    "pickup": [
        "{hut}", "the landing spot above {hut}", "{place}",
        "the road end at Lunder Ford", "the helipad below {hut}",
    ],
}

# Message bodies by kind. Each is one or two sentences; a message is an opener,
# a body, sometimes a second body of another kind, and a closer.
BODIES = {
    "weather": [
        "Wind from the {wdir} at {wind} km/h on the ridge, gusting {gust}.",
        "Fresh snow overnight, about {depth} cm at the hut and more above {alt} m.",
        "Cloud down to {alt} m, visibility under {vis} m on {path}.",
        "Clear and cold this morning, {temp} C at {morning}.",
        "Storms forecast after {later}. Please ask parties to be off the ridges by {time}.",
        "Freezing level at {alt} m today, dropping to {alt_low} m tonight.",
        "Rain since {time}, heavy at times. The streams are up near {place}.",
        "Forecast for {day}: {forecast}.",
        "Temperature at {hut} is {temp} C, pressure falling since {time}.",
        "Avalanche danger raised to considerable on north slopes above {alt} m.",
        "The wind has dropped. Sunny and calm at {hut}, good views to {place}.",
        "Thick fog at {place} since {time}. Parties are waiting at {hut}.",
        "Light snow at {hut}, {temp} C, wind from the {wdir}.",
        "Weather for {day} looks better: {forecast}.",
        "Lightning seen over {place} at {time}, still far off.",
    ],
    "supplies": [
        "We are low on {supply} and {supply2}. Can the next drop bring {sq} and {sq2}?",
        "Supply drop received at {time}: {sq}, {sq2} and {sq3}. Thanks.",
        "Helicopter drop for {hut} moved to {day}, weather permitting.",
        "Please add {sq} to the order for {hut}.",
        "Water tank at {pct} percent, the spring is running slowly.",
        "Gas is fine for {days} more days, food for about a week.",
        "Kitchen stock check: {sq} and {sq2} left, enough until {day}.",
        "Can someone carry up {sq} with the next party from the valley?",
        "Firewood store half full. We need {r_q} more bundles before the winter.",
        "The order for {hut} is packed: {sq}, {sq2} and {sq3}.",
        "Out of {supply} since {time}. Any spare at {hut2}?",
        "We can send {sq} over to {hut2} with {name2} tomorrow.",
    ],
    "path": [
        "{path} is {cond}.",
        "{path} is {cond}, {advice}.",
        "Rockfall on {path} at about {time}. Nobody hurt. Closed until the team has looked at it.",
        "The snow bridge near {place} has collapsed. Please use the winter route instead.",
        "We put new marker poles on {path} this afternoon.",
        "Ropes on the chain section checked and tightened.",
        "The stream at Lunder Ford is knee deep after the rain. Groups should wait for the morning.",
        "{path} is open again after the repairs.",
        "Can you check {path} on your way up? Reports say it is {cond}.",
        "Please warn parties that {path} is {cond}.",
        "Signs at {place} were blown down, we will replace them on {day}.",
    ],
    "arrivals": [
        "Party of {n} arrived at {time} from {hut2}, all well.",
        "Expecting a party of {n} from {hut2} by {later}. Please confirm when they leave.",
        "Party of {n} left {hut} at {time} for {hut2}, planned arrival {later}.",
        "Party of {n} is overdue from {path}. Last seen at {place} at {time}.",
        "Solo walker {name2} left for {hut2} at {time}, expected at {later}. Please confirm arrival.",
        "The overdue party has arrived safe at {hut}. Cancel the search, thanks.",
        "{n} guests tonight, {n2} more booked for {day}.",
        "School group of {big} with {n} teachers arriving {day}. Can you book them in?",
        "Two walkers turned back at {place} because of the wind. Both fine, staying here tonight.",
        "{name2} and {name3} reached {hut2} at {time}.",
        "Party of {n} still not in at {later}. We will call them at {later2}.",
        "Hut is full tonight. Please send late parties on to {hut2}.",
        "Group of {n} from {hut2} passed {place} at {time}, going well.",
    ],
    "equipment": [
        "Daily check done: {eq}, {eq2} and {eq3} all working.",
        "At {hut}, {fault}.",
        "Stretcher checked and stowed. Oxygen at {pct} percent.",
        "Defibrillator battery at {pct} percent, pads expire in {month}.",
        "Solar panel output low today, battery bank at {pct} percent.",
        "Spare pager charged and left in the drying room.",
        "Radio mast at {hut} damaged by the wind, using the handheld until it is fixed.",
        "Rope bag checked: {rope} m rope, {n} slings and {n2} carabiners. All fine.",
        "Winch test at {time} went well.",
        "{eq} is back from repair and tested.",
        "Please bring {spare} when you come up.",
        "Weekly check at {hut}: {eq} fine, {fault}.",
        "Can {hut2} lend us {spare} until {day}?",
    ],
    "firstaid": [
        "Handover: {age}-year-old {person} with {injury}. {treatment}, {obs}. Ready for pick-up at {pickup}.",
        "Handover: {child_age}-year-old {child} with {injury}. {treatment}, {obs}. Parents are with them.",
        "Patient from {path} is stable: {obs}, {obs2}. Arriving at base about {later}.",
        "First aid given at {hut} for {injury}. {treatment}. No need for the helicopter.",
        "Need advice: guest with {injury}, {obs}. Should we bring them down tonight?",
        "Handover done at {time} to {team}. Notes and the first aid form are in the bag.",
        "{team} has the patient. Thanks to the {hut} crew for the quick help.",
        "Walker with {injury} at {place}. {team} on the way, about {mins} minutes out.",
        "Update on the patient: {obs}, {obs2}.",
    ],
    "radio": [
        "Next radio check at {time} on channel {ch}.",
        "Radio schedule today: {time}, {later} and {later2}.",
        "Missed the {time} check, battery swapped, back on channel {ch}.",
        "Switching to channel {ch} for the rescue. Keep channel {ch2} clear.",
        "All huts, please report at {time}: guests, weather and any problems.",
        "Reception poor at {hut} since {time}. Will try again from the terrace.",
        "Evening check at {evening}: all huts reported, nothing to add.",
        "{hut} checked in at {time}. {n} guests, no problems.",
        "No answer from {hut2} at {time}. Can anyone reach them?",
        "Pager test at {time}, please reply with your hut name.",
    ],
}
# Short replies stand alone, never joined to another body.
REPLIES = [
    "Received, thanks.", "Copy that, will do.", "Understood.",
    "Thanks {name}, see you at {time}.", "Noted. Will pass it on to {hut2}.",
    "OK, we will wait for your call.", "Confirmed for {day}.",
    "Thanks, all clear here.", "Received. Stay safe up there.",
    "Good news, thanks for letting us know.",
]
KIND_WEIGHTS = {
    "weather": 18, "supplies": 15, "path": 15, "arrivals": 17,
    "equipment": 12, "firstaid": 10, "radio": 10, "replies": 4,
}
# Openers ending in ", " are followed by a lower-case start.
OPENERS = [
    ("", 40), ("Base, this is {hut}. ", 8), ("{hut} to Base: ", 8),
    ("{team} to {hut}: ", 4), ("To all huts: ", 4), ("Hi {name}, ", 6),
    ("{name} here. ", 5), ("Base to {hut}: ", 5), ("Morning {name}. ", 3),
    ("Evening report from {hut}: ", 3), ("Update: ", 4),
]
CLOSERS = [
    ("", 50), (" Over.", 8), (" Thanks.", 10), (" - {name9}", 8),
    (" Call if you need us.", 4), (" Will update at {later2}.", 4), (" Out.", 4),
    (" Thanks {name}.", 3),
]
SECOND_BODY_CHANCE = 0.35


def clock(minutes):
    return f"{minutes // 60:02d}:{minutes % 60:02d}"


class Message(dict):
    """Slot values of one message, drawn on first use and then kept."""

    def __init__(self, rng):
        super().__init__()
        self.rng = rng
        # The list entry behind each slot, before its own slots were filled, so
        # "4 kg of flour" and "10 kg of flour" count as the same item.
        self.entries = {}

    def __missing__(self, key):
        if key.startswith("r_"):
            # A fresh number at every use, e.g. each item of a supply list.
            return str(self.number(key[2:]))
        value = self.draw(key)
        self[key] = value
        return value

    def draw(self, key):
        base = key.rstrip("0123456789")
        if base in VOCAB:
            taken = {e for k, e in self.entries.items() if k.rstrip("0123456789") == base}
            choices = [c for c in VOCAB[base] if c not in taken] or VOCAB[base]
            self.entries[key] = self.rng.choice(choices)
            return self.entries[key].format_map(self)
        return str(self.number(key))

    def forget_numbers(self):
        """A second body keeps the huts and people but gets its own times and counts."""
        for key in [k for k in self if k not in self.entries]:
            del self[key]

    def number(self, key):
        r = self.rng
        if key == "time":
            return clock(r.randrange(5 * 60, 20 * 60, 5))
        if key == "later":
            start = int(self["time"][:2]) * 60 + int(self["time"][3:])
            return clock(min(start + r.randrange(30, 241, 15), 22 * 60))
        if key == "later2":
            start = int(self["later"][:2]) * 60 + int(self["later"][3:])
            return clock(min(start + r.randrange(30, 181, 15), 23 * 60 + 30))
        if key == "gust":
            return int(self["wind"]) + r.randrange(10, 41, 5)
        if key == "alt_low":
            return int(self["alt"]) - r.randrange(200, 601, 100)
        if key == "ch2":
            return r.choice([c for c in range(1, 17) if str(c) != self["ch"]])
        if key == "morning":
            return clock(r.randrange(5 * 60 + 30, 9 * 60 + 31, 5))
        if key == "evening":
            return clock(r.randrange(18 * 60, 21 * 60 + 31, 15))
        if key == "btemp":
            return f"{r.randrange(345, 376) / 10:.1f}"
        ranges = {
            "n": (2, 9), "n2": (2, 13), "q": (2, 21), "big": (12, 29),
            "temp": (-15, 19), "wind": (10, 91, 5), "depth": (5, 61, 5),
            "alt": (1800, 3201, 100), "vis": (20, 201, 10), "pct": (10, 101, 5),
            "ch": (1, 17), "age": (18, 77), "child_age": (8, 16),
            "pulse": (56, 121), "pain": (2, 10), "rope": (30, 101, 10),
            "days": (2, 10), "mins": (20, 91, 5),
        }
        return r.randrange(*ranges[key])


def weighted(rng, pairs):
    return rng.choices([p for p, _ in pairs], weights=[w for _, w in pairs])[0]


def sentence_start(template, text, after_comma):
    """Case of a body's first letter: lower after "Hi Maren, ", else upper."""
    if not after_comma:
        return text[0].upper() + text[1:]
    # A slot value keeps its own case (names capitalised, "the old mule track" not);
    # "OK" and "I" keep theirs.
    if template.startswith("{") or text[1:2].isupper() or text.startswith("I "):
        return text
    return text[0].lower() + text[1:]


def compose(rng):
    """One message and its (kind, template index, hut or place or name) combinations."""
    msg = Message(rng)
    kind = weighted(rng, list(KIND_WEIGHTS.items()))
    templates = REPLIES if kind == "replies" else BODIES[kind]
    index = rng.randrange(len(templates))
    opener = weighted(rng, OPENERS).format_map(msg)
    first = templates[index]
    parts = [sentence_start(first, first.format_map(msg), opener.endswith(", "))]
    combos = [(kind, index)]
    if kind != "replies" and rng.random() < SECOND_BODY_CHANCE:
        msg.forget_numbers()
        other = rng.choice([k for k in BODIES if k != kind])
        j = rng.randrange(len(BODIES[other]))
        parts.append(sentence_start(BODIES[other][j], BODIES[other][j].format_map(msg), False))
        combos.append((other, j))
    closer = weighted(rng, CLOSERS).format_map(msg)
    text = opener + " ".join(parts) + closer
    # A slot such as {team} may open a sentence mid-body: "... at Ondle Tarn. The dog team ...".
    text = re.sub(r"([.?!] )([a-z])", lambda m: m.group(1) + m.group(2).upper(), text)
    text = text[0].upper() + text[1:]
    anchor = msg.get("hut") or msg.get("place") or msg.get("name") or ""
    return text, [(k, i, anchor) for k, i in combos]


def reserved(combo):
    kind, index, anchor = combo
    return zlib.crc32(f"{kind}/{index}/{anchor}".encode()) % RESERVED_ONE_IN == 0


def generate(seed, target_bytes, keep, skip_lines=frozenset()):
    rng = random.Random(seed)
    lines, size, with_reserved = [], 0, 0
    while size < target_bytes:
        text, combos = compose(rng)
        if len(text.encode()) > MAX_MESSAGE_BYTES or text in skip_lines:
            continue
        if not keep(combos):
            continue
        with_reserved += any(reserved(c) for c in combos)
        lines.append(text)
        size += len(text.encode()) + 1
    return lines, with_reserved


def write(path, lines):
    path.write_text("".join(line + "\n" for line in lines), encoding="ascii")
    print(f"wrote {path.name}: {len(lines)} messages, {path.stat().st_size} bytes")


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--out-dir", type=Path, default=Path(__file__).resolve().parent)
    args = parser.parse_args()

    train, _ = generate(TRAIN_SEED, TRAIN_TARGET_BYTES,
                        keep=lambda combos: not any(reserved(c) for c in combos))
    heldout, fresh = generate(HELDOUT_SEED, HELDOUT_TARGET_BYTES,
                              keep=lambda combos: True, skip_lines=frozenset(train))
    write(args.out_dir / "train.txt", train)
    write(args.out_dir / "heldout.txt", heldout)
    print(f"held-out messages using a combination absent from train: {fresh} of {len(heldout)}")
    print(f"distinct messages in train: {len(set(train))} of {len(train)}")


if __name__ == "__main__":
    main()
