#!/usr/bin/python3
"""Kill test of the window: the real binary, edits by xdotool, kill -9.

Run by .ci/killtest.sh (which starts the X server); see there. For each run
it opens the project in the window with BOXWRIGHT_EDIT_TRACE set, sends a
random sequence of mouse drags, clicks and keys for a random time, kills the
process with SIGKILL at that moment, and then checks the file:

  * sqlite3's PRAGMA integrity_check says "ok" and foreign_key_check is empty;
  * every edit the status bar acknowledged is there with the traced values:
    the file equals the state the trace describes (the annotator's labels by
    ID with class, origin, suggestion and box; image statuses; pending
    suggestions), where the edits the window had begun but not acknowledged
    when it died (intents after the last acknowledgement) may each be there
    or not, in order (see app/gui/edittrace.go for the trace);
  * nobody else's labels changed;
  * `boxwright info FILE --json` reads the file afterwards.

Mode "fresh" starts every run from a new copy of the demo project; mode
"same" keeps using one copy across all its runs, as a person would. Every run
draws its randomness from "SEED-MODE-RUN", so one run can be replayed alone
with --only MODE:RUN (timing differs from run to run, the sequence does not).
"""

import argparse
import json
import os
import random
import shutil
import signal
import sqlite3
import subprocess
import sys
import threading
import time

ANNOTATOR = "killtest"

# The image area of the 1280×820 window (window coordinates): the view
# sits between the image list and the class bar, under the tool bar.
AREA = (280, 145, 1030, 700)
# The project schema version dump() reads (store/migrations).
SCHEMA = 4


# ---- the file --------------------------------------------------------------

def dump(path):
    """The state the check compares: the annotator's labels, the others'
    labels, image statuses and pending suggestions."""
    c = sqlite3.connect(path)
    try:
        # The queries below follow this schema; a newer one may keep its
        # data elsewhere (schema 4 moved image status per annotator, and a
        # check reading the old column reported false losses).
        version = c.execute("SELECT max(version) FROM schema_migrations").fetchone()[0]
        if version != SCHEMA:
            sys.exit(f"killtest: {path} has schema {version}; this check reads schema {SCHEMA}: update dump() first")
        row = c.execute("SELECT id FROM annotators WHERE name = ?", (ANNOTATOR,)).fetchone()
        me = row[0] if row else -1
        mine, others = {}, []
        for (lid, img, cls, ann, x0, y0, x1, y1, origin, sugg) in c.execute(
                "SELECT id, image_id, class_id, annotator_id, x0, y0, x1, y1, origin, suggestion_id FROM labels ORDER BY id"):
            if ann == me:
                mine[lid] = (img, cls, origin, sugg or 0, (x0, y0, x1, y1))
            else:
                others.append((lid, img, cls, ann, x0, y0, x1, y1, origin, sugg))
        # A status belongs to an annotator (schema 4): the window labels
        # as ANNOTATOR, so theirs is what it acknowledges; no row is "new".
        status = {img: "new" for (img,) in c.execute("SELECT id FROM images")}
        status.update(c.execute("SELECT image_id, status FROM image_status WHERE annotator_id = ?", (me,)))
        pending = {img: set() for img in status}
        sugg_image = {}
        for sid, img, state in c.execute("SELECT id, image_id, state FROM suggestions"):
            sugg_image[sid] = img
            if state == "pending":
                pending[img].add(sid)
        return {"mine": mine, "others": others, "status": status, "pending": pending, "sugg_image": sugg_image}
    finally:
        c.close()


class State:
    """What the file must hold: labels by ID, labels not written yet when
    traced (anonymous: matched by their values), statuses, pending sets."""

    def __init__(self, d):
        self.labels = dict(d["mine"])
        self.anon = []
        self.status = dict(d["status"])
        self.pending = {k: set(v) for k, v in d["pending"].items()}

    def copy(self):
        s = State.__new__(State)
        s.labels, s.anon, s.status = dict(self.labels), list(self.anon), dict(self.status)
        s.pending = {k: set(v) for k, v in self.pending.items()}
        return s


def lab(t):
    return (t["image"], t["class"], t["origin"], t.get("suggestion", 0), tuple(t["box"]))


def apply_intent(s, it, sugg_image):
    """The state after the write an intent line announced (the store's rules:
    store/edits.go, store/review.go)."""
    s = s.copy()
    op = it["op"]
    if op == "labels":
        for lid in it.get("delete", []):
            s.labels.pop(lid, None)
        for u in it.get("update", []):
            if u["id"] in s.labels:
                img, _, origin, sugg, _ = s.labels[u["id"]]
                s.labels[u["id"]] = (img, u["class"], origin, sugg, tuple(u["box"]))
        for l in it.get("insert", []):
            s.anon.append(lab(l))
            if s.status.get(l["image"]) == "new":
                s.status[l["image"]] = "started"
    elif op == "status":
        s.status[it["image"]] = it["status"]
    elif op == "decide":
        for d in it["decisions"]:
            s.pending.get(sugg_image.get(d["suggestion"]), set()).discard(d["suggestion"])
            if d["accept"] and "label" in d:
                s.anon.append(lab(d["label"]))
                # The accepted box is the reviewer's label: it starts the
                # image for them, as a drawn one does.
                img = d["label"]["image"]
                if s.status.get(img) == "new":
                    s.status[img] = "started"
    elif op == "undecide":
        ids = set(it["suggestions"])
        for sid in ids:
            s.pending.setdefault(sugg_image.get(sid), set()).add(sid)
        s.labels = {k: v for k, v in s.labels.items() if v[3] not in ids}
        s.anon = [v for v in s.anon if v[3] not in ids]
    return s


def apply_ack(s, a):
    img = a["image"]
    if not img:
        return
    if a.get("labels") is not None:
        s.labels = {k: v for k, v in s.labels.items() if v[0] != img}
        s.anon = [v for v in s.anon if v[0] != img]
        for l in a["labels"]:
            if l.get("id"):
                s.labels[l["id"]] = lab(l)
            else:
                s.anon.append(lab(l))
    if a.get("status"):
        s.status[img] = a["status"]
    if a.get("pending") is not None:
        s.pending[img] = set(a["pending"])


def differences(s, d, pre):
    """How the file d differs from state s: a list of messages (empty: it
    matches) and the images they are about."""
    out, bad = [], set()
    for lid, want in s.labels.items():
        got = d["mine"].get(lid)
        if got != want:
            out.append(f"label {lid}: file {got}, acknowledged {want}")
            bad.add(want[0])
    extra = sorted(v for k, v in d["mine"].items() if k not in s.labels)
    if extra != sorted(s.anon):
        out.append(f"labels without a traced ID: file {extra}, expected {sorted(s.anon)}")
        bad |= {v[0] for v in set(extra) ^ set(s.anon)}
    for img, st in s.status.items():
        if d["status"].get(img) != st:
            out.append(f"image {img}: status {d['status'].get(img)} in the file, {st} acknowledged")
            bad.add(img)
    for img, p in s.pending.items():
        if img is not None and d["pending"].get(img, set()) != p:
            out.append(f"image {img}: pending suggestions {sorted(d['pending'].get(img, set()))} in the file, {sorted(p)} acknowledged")
            bad.add(img)
    if d["others"] != pre["others"]:
        out.append("other annotators' labels changed")
    return out, bad


def read_trace(path):
    lines = []
    if os.path.exists(path):
        with open(path, encoding="utf-8") as f:
            for n, text in enumerate(f, 1):
                if not text.endswith("\n"):
                    break  # cut off by the kill: never acknowledged
                try:
                    lines.append(json.loads(text))
                except ValueError as e:
                    raise SystemExit(f"{path}:{n}: not a JSON line ({e}): {text!r}")
    return lines


def check(path, trace, pre, killed_at=None):
    """Compares the file after a kill with the trace of the run and the state
    before it. Returns a dict of figures; "problems" is empty when it held."""
    res = {"problems": []}
    r = subprocess.run(["sqlite3", path, "PRAGMA integrity_check"], capture_output=True, text=True)
    res["integrity"] = (r.stdout.strip() or r.stderr.strip())
    if r.returncode != 0 or res["integrity"] != "ok":
        res["problems"].append(f"integrity_check: {res['integrity']}")
    r = subprocess.run(["sqlite3", path, "PRAGMA foreign_key_check"], capture_output=True, text=True)
    if r.returncode != 0 or r.stdout.strip():
        res["problems"].append(f"foreign_key_check: {r.stdout.strip() or r.stderr.strip()}")

    lines = read_trace(trace)
    s = State(pre)
    intents, acked_upto, acks, waits = [], 0, 0, []
    for ln in lines:
        if "intent" in ln:
            intents.append(ln)
        elif "ack" in ln:
            acks += 1
            for it in intents:
                if acked_upto < it["intent"] <= ln["ack"]:
                    s = apply_intent(s, it, pre["sugg_image"])
                    waits.append((ln["at"] - it["at"]) / 1000)  # ms from intent to "saved"
            acked_upto = max(acked_upto, ln["ack"])
            apply_ack(s, ln)
    in_flight = [it for it in intents if it["intent"] > acked_upto]
    res.update(intents=len(intents), acked=len(intents) - len(in_flight), acks=acks, in_flight=len(in_flight), waits_ms=waits)
    if killed_at is not None:  # how long each unacknowledged edit had been under way
        res["in_flight_ms"] = [round(killed_at * 1000 - it["at"] / 1000, 1) for it in in_flight]
    res["kinds"] = {}
    for it in intents[:res["acked"]]:
        k = kind(it)
        res["kinds"][k] = res["kinds"].get(k, 0) + 1

    d = dump(path)
    candidates = [s]
    for it in in_flight:
        candidates.append(apply_intent(candidates[-1], it, pre["sugg_image"]))
    diffs = [differences(c, d, pre)[0] for c in candidates]
    landed = next((k for k, df in enumerate(diffs) if not df), None)
    res["landed"] = landed  # how many of the unacknowledged edits reached the file
    if landed is None:
        res["problems"].append("the file is not what the status bar acknowledged: " + "; ".join(diffs[0][:8]))
        # acknowledged edits on the images that differ count as not found
        bad = differences(s, d, pre)[1]
        res["missing"] = sum(1 for it in intents[:res["acked"]] if touched(it, pre, s) & bad)
    else:
        res["missing"] = 0
        res["control"] = control(path, candidates[landed], acked_images(lines), pre)
        if res["control"] == "missed":
            res["problems"].append("negative control: a changed acknowledged box went unnoticed (the check is broken)")
    res["labels_checked"] = len(s.labels) + len(s.anon)

    r = subprocess.run([BIN, "info", path, "--json"], capture_output=True, text=True)
    try:
        json.loads(r.stdout)
        ok = r.returncode == 0
    except ValueError:
        ok = False
    res["info"] = ok
    if not ok:
        res["problems"].append(f"boxwright info failed ({r.returncode}): {r.stderr.strip()}")
    return res


def acked_images(lines):
    return [ln["image"] for ln in lines if "ack" in ln and ln["image"]]


def control(path, s, images, pre):
    """A negative control of the check itself: in a copy of the file, move
    one acknowledged box by half a pixel (or, with no box, change an
    acknowledged image's status) and make sure the comparison notices."""
    target = next((k for k, v in s.labels.items() if v[0] in set(images)), None)
    if target is None and not images:
        return "none"
    copy = path + ".control"
    src, dst = sqlite3.connect(path), sqlite3.connect(copy)
    try:
        src.backup(dst)
        if target is not None:
            dst.execute("UPDATE labels SET x1 = x1 + 0.5 WHERE id = ?", (target,))
        else:
            me = dst.execute("SELECT id FROM annotators WHERE name = ?", (ANNOTATOR,)).fetchone()[0]
            dst.execute("INSERT INTO image_status(image_id, annotator_id, status, updated_at) VALUES (?, ?, 'skipped', '2026-01-01T00:00:00Z') "
                        "ON CONFLICT(image_id, annotator_id) DO UPDATE SET status = CASE status WHEN 'skipped' THEN 'done' ELSE 'skipped' END",
                        (images[-1], me))
        dst.commit()
    finally:
        src.close()
        dst.close()
    try:
        return "caught" if differences(s, dump(copy), pre)[0] else "missed"
    finally:
        os.remove(copy)


def kind(it):
    """A short name of the edit an intent wrote."""
    if it["op"] == "labels":
        if it.get("insert") and not it.get("delete") and not it.get("update"):
            return "create"
        if it.get("delete") and not it.get("insert") and not it.get("update"):
            return "delete"
        if it.get("update") and not it.get("insert") and not it.get("delete"):
            return "change"
        return "mixed"
    if it["op"] == "decide":
        return "accept" if any(d["accept"] for d in it["decisions"]) else "reject"
    return it["op"]


def touched(it, pre, s):
    """The images an intent wrote to (as far as the trace tells)."""
    imgs = {l["image"] for l in it.get("insert", []) + it.get("update", [])}
    imgs |= {s.labels[i][0] for i in it.get("delete", []) if i in s.labels}
    if it.get("image"):
        imgs.add(it["image"])
    imgs |= {pre["sugg_image"].get(d["suggestion"]) for d in it.get("decisions", [])}
    imgs |= {pre["sugg_image"].get(i) for i in it.get("suggestions", [])}
    return imgs


# ---- the window ------------------------------------------------------------

def xdo(*args):
    subprocess.run(["xdotool", *map(str, args)], stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)


def point(rng):
    return rng.randint(AREA[0], AREA[2]), rng.randint(AREA[1], AREA[3])


def drag(rng, wid, x, y):
    """Press, move in steps, release: a box drawn, or a box moved or resized
    when it starts on one."""
    dx, dy = rng.randint(-160, 160), rng.randint(-120, 120)
    steps = rng.randint(3, 8)
    cmd = ["mousemove", "--window", wid, x, y, "mousedown", "1"]
    for i in range(1, steps + 1):
        cmd += ["mousemove", "--window", wid, x + dx * i // steps, y + dy * i // steps, "sleep", "0.02"]
    cmd += ["mouseup", "1"]
    xdo(*cmd)


KEYS = [  # (weight, xdotool key) — no key that opens a dialog or another window
    (6, "Left"), (4, "Right"), (4, "Up"), (4, "Down"), (3, "shift+Right"), (3, "shift+Down"),
    (3, "ctrl+Right"), (3, "ctrl+Down"), (2, "ctrl+shift+Left"),
    (3, "1"), (3, "2"), (2, "3"), (2, "4"), (1, "ctrl+2"), (1, "ctrl+3"),
    (4, "d"), (6, "Delete"), (1, "ctrl+Delete"),
    (8, "ctrl+z"), (3, "ctrl+shift+z"), (2, "ctrl+y"),
    (4, "n"), (3, "b"), (2, "Return"), (1, "x"),
    (4, "a"), (3, "z"), (3, "shift+a"), (4, "Tab"), (2, "Escape"),
    # the next box or suggestion, then a decision (a number key first corrects it)
    (6, "Tab a"), (4, "Tab z"), (3, "Tab 3 a"), (3, "shift+Tab Right a"),
]


def act(rng, wid):
    r = rng.random()
    if r < 0.30:
        drag(rng, wid, *point(rng))
    elif r < 0.42:
        x, y = point(rng)
        xdo("mousemove", "--window", wid, x, y, "click", "1")
    elif r < 0.50:  # select, then drag from the same point: a move
        x, y = point(rng)
        xdo("mousemove", "--window", wid, x, y, "click", "1")
        drag(rng, wid, x, y)
    else:
        total = sum(w for w, _ in KEYS)
        pick = rng.uniform(0, total)
        for w, k in KEYS:
            pick -= w
            if pick <= 0:
                xdo("key", "--delay", "30", *k.split())
                break
    time.sleep(rng.uniform(0, 0.15))


def run_once(rng, project, trace, workdir):
    """Opens the window, edits until the kill; returns the seconds it lived,
    the actions sent and the Unix time of the kill."""
    if os.path.exists(trace):
        os.remove(trace)
    env = dict(os.environ, BOXWRIGHT_EDIT_TRACE=trace, XDG_CONFIG_HOME=os.path.join(workdir, "config"), LANG="C")
    log = open(os.path.join(workdir, "app.log"), "ab")
    p = subprocess.Popen([BIN, "open", project, "--annotator", ANNOTATOR], stdout=log, stderr=log, env=env)
    try:
        r = subprocess.run(["xdotool", "search", "--sync", "--name", "^Boxwright"], capture_output=True, text=True, timeout=60)
        wid = r.stdout.split()[0]
    except (subprocess.TimeoutExpired, IndexError):
        p.kill()
        p.wait()
        raise SystemExit(f"no window appeared within 60 s; see {log.name}")
    xdo("windowfocus", wid)
    alive = rng.uniform(0.5, 8.0)
    started = time.time()
    # KILLTEST_SIGNAL=QUIT instead makes Go print every goroutine's stack
    # into app.log at that moment: for a run that looks stuck.
    sig = getattr(signal, "SIG" + os.environ.get("KILLTEST_SIGNAL", "KILL"))
    killed_at = []

    def kill():
        killed_at.append(time.time())
        os.kill(p.pid, sig)
    timer = threading.Timer(alive, kill)
    timer.start()
    n = 0
    while p.poll() is None:
        act(rng, wid)
        n += 1
    timer.join()
    p.wait()
    log.close()
    xdo("mouseup", "1")  # a drag cut off by the kill leaves the button down
    xdo("keyup", "ctrl", "shift")
    if sig == signal.SIGKILL and p.returncode != -signal.SIGKILL:
        raise SystemExit(f"the window ended by itself ({p.returncode}) before the kill; see {log.name}")
    return killed_at[0] - started, n, killed_at[0]


def main():
    global BIN
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("binary")
    ap.add_argument("--runs", type=int, default=50)
    ap.add_argument("--seed", type=int, default=None)
    ap.add_argument("--modes", default="fresh,same")
    ap.add_argument("--only", default="", help="MODE:RUN, one run to replay")
    ap.add_argument("--work", default="build/killtest")
    a = ap.parse_args()
    BIN = os.path.realpath(a.binary)
    seed = a.seed if a.seed is not None else random.SystemRandom().randrange(1, 1 << 31)
    print(f"killtest: seed {seed} (replay: make killtest KILLTEST_SEED={seed})", flush=True)
    work = os.path.realpath(a.work)
    shutil.rmtree(work, ignore_errors=True)
    os.makedirs(work)
    pristine = os.path.join(work, "pristine")
    subprocess.run([BIN, "demo", pristine, "--no-open"], check=True, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)

    plan = [(m, i) for m in a.modes.split(",") for i in range(1, a.runs + 1)]
    if a.only:
        m, i = a.only.split(":")
        plan = [(m, int(i))]
    failures, per_mode = [], {}
    for mode, i in plan:
        dest = os.path.join(work, mode)
        if mode == "fresh" or not os.path.exists(dest):
            shutil.rmtree(dest, ignore_errors=True)
            shutil.copytree(pristine, dest)
        project = os.path.join(dest, "harbour.boxw")
        trace = os.path.join(work, f"trace-{mode}-{i}.jsonl")
        pre = dump(project)
        rng = random.Random(f"{seed}-{mode}-{i}")
        alive, actions, killed_at = run_once(rng, project, trace, work)
        res = check(project, trace, pre, killed_at)
        res.update(mode=mode, run=i, alive=round(alive, 2), actions=actions)
        m = per_mode.setdefault(mode, {"runs": 0, "acked": 0, "found": 0, "in_flight": 0, "landed": 0, "integrity_ok": 0, "info_ok": 0, "failed": 0})
        m["runs"] += 1
        m["acked"] += res["acked"]
        m["found"] += res["acked"] - res["missing"]
        m["in_flight"] += res["in_flight"]
        m["landed"] += res["landed"] or 0
        m["integrity_ok"] += res["integrity"] == "ok"
        m["info_ok"] += res["info"]
        m["controls"] = m.get("controls", 0) + (res.get("control") == "caught")
        m["control_runs"] = m.get("control_runs", 0) + (res.get("control") in ("caught", "missed"))
        m.setdefault("waits_ms", []).extend(res["waits_ms"])
        m.setdefault("in_flight_ms", []).extend(res.get("in_flight_ms", []))
        res["waits_ms"] = max(res["waits_ms"], default=0)
        for k, n in res["kinds"].items():
            m.setdefault("kinds", {})[k] = m.setdefault("kinds", {}).get(k, 0) + n
        ok = not res["problems"]
        m["failed"] += not ok
        print(f"{mode} {i:2d}: killed after {alive:4.1f} s, {actions:3d} actions, {res['acked']:3d} edits acknowledged, "
              f"{res['in_flight']} in flight ({res['landed']} reached the file), integrity {res['integrity']}, "
              f"{'ok' if ok else 'FAILED: ' + ' | '.join(res['problems'])}"
              + (f" (in flight for {res['in_flight_ms']} ms)" if res.get("in_flight_ms") else ""), flush=True)
        if not ok:
            failures.append(res)
            keep = os.path.join(work, f"failed-{mode}-{i}")
            shutil.copytree(dest, keep)
            shutil.copy(trace, keep)
    for mode, m in per_mode.items():
        print(f"killtest {mode}: {m['runs']} runs, {m['acked']} edits acknowledged, {m['found']} found, "
              f"{m['in_flight']} unacknowledged edits in flight at the kill ({m['landed']} of them in the file), "
              f"integrity_check ok {m['integrity_ok']}/{m['runs']}, info ok {m['info_ok']}/{m['runs']}, "
              f"negative control caught {m.get('controls', 0)}/{m.get('control_runs', 0)} (runs with something acknowledged), {m['failed']} runs failed")
        w = sorted(m.get("waits_ms", [])) or [0]
        print(f"killtest {mode}: from intent to \"saved\": median {w[len(w) // 2]:.1f} ms, 99th percentile {w[min(len(w) - 1, len(w) * 99 // 100)]:.1f} ms, "
              f"max {w[-1]:.1f} ms; unacknowledged edits had been under way for {sorted(m.get('in_flight_ms', []))} ms at the kill")
        print(f"killtest {mode}: acknowledged edits by kind: " + ", ".join(f"{k} {n}" for k, n in sorted(m.get("kinds", {}).items())))
    with open(os.path.join(work, "summary.json"), "w") as f:
        json.dump({"seed": seed, "modes": per_mode, "failures": failures}, f, indent=1)
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
