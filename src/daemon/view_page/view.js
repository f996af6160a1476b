// latticed view: the page's script.  It follows /events (Server-Sent
// Events, one JSON page state per message, see view_model.h), shows the
// drawing of /lattice.svg inline with the sounding tones and the held
// chord lit, and says plainly when latticed or this view is gone.  A
// hidden tab keeps only the latest state until it is seen again.  With
// control on, its buttons POST to /control with the token from the
// address (#token=...) or typed in; nothing else leaves the page.
"use strict";

(function () {
  const $ = (id) => document.getElementById(id);
  let drawn = -1;          // version of the drawing shown
  let drawing = null;      // the <svg> element
  let fetching = 0;        // version being fetched
  let last = null;         // the last page state
  let token = sessionStorage.getItem("latticed-token") || "";

  // the token printed by latticed view comes in the address; keep it for
  // this tab and take it out of the address bar (and out of its history)
  function takeToken() {
    if (!location.hash.startsWith("#token=")) return;
    token = decodeURIComponent(location.hash.slice(7));
    sessionStorage.setItem("latticed-token", token);
    history.replaceState(null, "", location.pathname);
    if (last) showControls(last);
  }
  takeToken();
  window.addEventListener("hashchange", takeToken);

  function setLink(kind, text) {
    const link = $("link");
    link.className = "link " + kind;
    $("link-text").textContent = text;
  }

  // The drawing's tone boxes are sized for print; on a screen they grow as
  // far as the closest two allow (at most twice), so a hexany reads from
  // across a stage and an eikosany still keeps its boxes apart.
  function growTones(svg) {
    const boxes = Array.from(svg.querySelectorAll("g.tone > rect")).map((r) => {
      const b = r.getBBox();
      return { g: r.parentNode, x: b.x + b.width / 2, y: b.y + b.height / 2, w: b.width, h: b.height };
    });
    let room = 2;
    for (let i = 0; i < boxes.length; i++) {
      for (let j = i + 1; j < boxes.length; j++) {
        const a = boxes[i], b = boxes[j];
        // two boxes scaled by s touch when both gaps are below s times the size
        const s = Math.max(Math.abs(a.x - b.x) / a.w, Math.abs(a.y - b.y) / a.h) * 0.92;
        room = Math.min(room, s);
      }
    }
    const scale = Math.max(1, room);
    for (const b of boxes) {
      b.g.setAttribute("transform", "translate(" + b.x + " " + b.y + ") scale(" + scale.toFixed(3) +
        ") translate(" + -b.x + " " + -b.y + ")");
    }
  }

  // Fit the view box to the lattice itself: the drawing's own title and
  // legend are for print and hidden here.
  function fitDrawing(svg) {
    let box = null;
    for (const sel of ["g.chords", "g.edges", "g.tones"]) {
      const g = svg.querySelector(sel);
      if (!g) continue;
      const b = g.getBBox();
      if (b.width === 0 && b.height === 0) continue;
      box = box ? {
        x: Math.min(box.x, b.x), y: Math.min(box.y, b.y),
        r: Math.max(box.r, b.x + b.width), b: Math.max(box.b, b.y + b.height)
      } : { x: b.x, y: b.y, r: b.x + b.width, b: b.y + b.height };
    }
    if (!box) return;
    const pad = 12;
    svg.setAttribute("viewBox", [box.x - pad, box.y - pad, box.r - box.x + 2 * pad,
      box.b - box.y + 2 * pad].join(" "));
    svg.removeAttribute("width");
    svg.removeAttribute("height");
    svg.setAttribute("preserveAspectRatio", "xMidYMin meet"); // right under the chord
  }

  function showDrawing(text, version) {
    // its stylesheet comes with /view.css: the page's policy allows no
    // inline style, and the drawing's own is for print
    const bare = text.replace(/<style[^>]*>[\s\S]*?<\/style>/g, "");
    const doc = new DOMParser().parseFromString(bare, "image/svg+xml");
    const svg = doc.documentElement;
    if (svg.nodeName !== "svg") return;
    const node = document.importNode(svg, true);
    const box = $("lattice");
    box.replaceChildren(node);
    drawing = node;
    drawn = version;
    growTones(node);
    fitDrawing(node);
    if (last) light(last);
  }

  function fetchDrawing(version) {
    if (fetching === version) return;
    fetching = version;
    fetch("/lattice.svg?v=" + version, { cache: "no-store" })
      .then((r) => (r.ok ? r.text() : Promise.reject(r.status)))
      .then((t) => { if (fetching === version) showDrawing(t, version); })
      .catch(() => { fetching = 0; });
  }

  function light(state) {
    if (!drawing) return;
    const lit = new Set(state.lit || []);
    for (const g of drawing.querySelectorAll("g.tone")) {
      g.classList.toggle("lit", lit.has(Number(g.dataset.tone)));
    }
    const chord = state.chord ? state.chord.index : -1;
    for (const p of drawing.querySelectorAll("polygon.chord")) {
      p.classList.toggle("lit", Number(p.dataset.chord) === chord);
    }
  }

  function toneLabel(index) {
    const g = drawing && drawing.querySelector("#tone-" + index);
    return g ? g.dataset.seeds : String(index);
  }

  // One line, as large as the panel allows (a seven-tone proportion too).
  function fitText(el) {
    el.style.fontSize = "";
    let size = parseFloat(getComputedStyle(el).fontSize);
    while (el.scrollWidth > el.clientWidth + 1 && size > 14) {
      size *= 0.9;
      el.style.fontSize = size + "px";
    }
  }

  function showChord(state) {
    const name = $("chord-name"), detail = $("chord-detail");
    const lit = state.lit || [];
    if (state.chord) {
      const c = state.chord;
      name.textContent = c.proportion || c.tones.map(toneLabel).join(" ");
      name.className = c.kind;
      detail.textContent = c.kind === "harmonic"
        ? "harmonic chord" + (c.seeds ? ", sharing " + c.seeds : "")
        : "subharmonic chord" + (c.seeds ? ", inside " + c.seeds : "");
    } else if (lit.length) {
      name.textContent = lit.map(toneLabel).join("  ");
      name.className = "tones";
      detail.textContent = lit.length === 1 ? "one tone" : lit.length + " tones, not one chord";
    } else {
      name.textContent = "\u2013";
      name.className = "none";
      detail.textContent = "nothing sounds";
    }
    fitText(name);
  }

  function showControls(state) {
    const box = $("controls");
    box.hidden = !state.control;
    if (!state.control) return;
    $("token-row").hidden = token !== "";
    const presets = $("presets");
    const names = state.presets || [];
    if (presets.dataset.names !== names.join("\n")) {
      presets.dataset.names = names.join("\n");
      presets.replaceChildren(...names.map((n, i) => {
        const b = document.createElement("button");
        b.type = "button";
        b.textContent = n;
        b.addEventListener("click", () => send("preset " + i));
        return b;
      }));
    }
    presets.querySelectorAll("button").forEach((b, i) => {
      b.classList.toggle("current", state.preset && state.preset.index === i);
    });
    for (const b of box.querySelectorAll("button")) b.disabled = state.daemon !== "up";
    $("token-use").disabled = false;
  }

  function apply(state) {
    last = state;
    const up = state.daemon === "up";
    setLink(up ? "up" : "down", up ? "live" : "latticed gone");
    document.body.classList.toggle("gone", !up);
    $("gone").hidden = up;
    $("gone-text").textContent = up ? "" : state.message;
    $("message").textContent = up ? state.message : "";
    $("preset").textContent = up ? state.preset.name : "\u2013";
    $("root").textContent = up ? state.root.label : "\u2013";
    if (state.drawing && state.drawing !== drawn) fetchDrawing(state.drawing);
    light(state);
    showChord(state);
    showControls(state);
  }

  function send(line) {
    const result = $("control-result");
    fetch("/control", {
      method: "POST",
      headers: { "Content-Type": "text/plain", "X-Latticed-Token": token },
      body: line
    }).then((r) => r.json().then((j) => ({ status: r.status, j })))
      .then(({ status, j }) => {
        result.textContent = j.ok ? j.message : j.error;
        result.className = j.ok ? "ok" : "bad";
        if (status === 403 && /token/.test(j.error || "")) {
          token = "";
          sessionStorage.removeItem("latticed-token");
          $("token-row").hidden = false;
        }
      })
      .catch(() => { result.textContent = "no answer from latticed view"; result.className = "bad"; });
  }

  function root(step) {
    if (!last || !last.root) return;
    const tones = last.tones || 0;
    const slot = Math.min(Math.max(last.root.slot + step, 0), tones);
    send("root " + slot);
  }

  $("root-down").addEventListener("click", () => root(-1));
  $("root-up").addEventListener("click", () => root(1));
  $("root-home").addEventListener("click", () => send("root 0"));
  $("panic").addEventListener("click", () => send("panic"));
  $("token-use").addEventListener("click", () => {
    token = $("token-input").value.trim();
    sessionStorage.setItem("latticed-token", token);
    $("token-input").value = "";
    $("token-row").hidden = token !== "";
  });

  function follow() {
    const events = new EventSource("/events");
    // a hidden tab only keeps the latest state and shows it when seen again:
    // ten tabs left open cost nothing while the notes fly
    events.onmessage = (e) => {
      let state;
      try { state = JSON.parse(e.data); } catch (err) { return; /* the next one says it all */ }
      if (document.visibilityState === "hidden") hidden = state;
      else apply(state);
    };
    events.onerror = () => {
      // a refused stream (too many pages open) is not retried by the browser
      if (events.readyState === EventSource.CLOSED) setTimeout(follow, 2000);
      setLink("lost", "no connection to latticed view");
      document.body.classList.add("gone");
      $("gone").hidden = false;
      $("gone-title").textContent = "this page lost latticed view";
      $("gone-text").textContent = "trying again";
    };
    events.onopen = () => { $("gone-title").textContent = "latticed is not running"; };
  }
  let hidden = null;
  document.addEventListener("visibilitychange", () => {
    if (document.visibilityState !== "hidden" && hidden) { const s = hidden; hidden = null; apply(s); }
  });
  window.addEventListener("resize", () => fitText($("chord-name")));
  follow();
})();
