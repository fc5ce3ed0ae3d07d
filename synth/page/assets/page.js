"use strict";
// The review page: plays the set as its SFZ mapping would and shows each
// file's figures. Plain script, no library; everything it loads is a file
// of this folder.
(function () {
  const data = JSON.parse(document.getElementById("set-data").textContent);
  const el = (id) => document.getElementById(id);
  const NAMES = ["C", "C#", "D", "D#", "E", "F", "F#", "G", "G#", "A", "A#", "B"];
  const noteName = (k) => NAMES[k % 12] + (Math.floor(k / 12) - 1); // C4 = MIDI 60
  const isBlack = (k) => [1, 3, 6, 8, 10].includes(k % 12);
  const dbToGain = (db) => Math.pow(10, db / 20);
  const served = location.protocol === "http:" || location.protocol === "https:";

  // ---- Choosing regions, as an SFZ player does -------------------------
  // A region answers a note whose key lies in lokey..hikey and whose
  // velocity lies in lovel..hivel. Round robins: each region counts the
  // notes it answers, from 1, and plays when that count, wrapped at
  // seq_length, equals its seq_position (sfzformat.com, seq_length and
  // seq_position).
  const counts = new Map();
  function regionsFor(key, velocity) {
    const chosen = [];
    data.regions.forEach((r, i) => {
      if (key < r.lokey || key > r.hikey || velocity < r.lovel || velocity > r.hivel) return;
      const n = (counts.get(i) || 0) + 1;
      counts.set(i, n);
      if (((n - 1) % r.seqLength) + 1 === r.seqPosition) chosen.push(r);
    });
    return chosen;
  }

  // ---- Audio ----------------------------------------------------------
  let ctx = null;
  let master = null;
  let masterDB = -20;
  const buffers = new Map(); // "rate:sample" -> Promise<AudioBuffer>
  const voices = new Map(); // key -> voices sounding for it
  const record = []; // what each note played, for the test hook

  function context() {
    if (ctx) return ctx;
    const AC = window.AudioContext || window.webkitAudioContext;
    try {
      // The set's own rate, so samples play as they are, without
      // resampling.
      ctx = new AC({ sampleRate: data.sampleRate });
    } catch (e) {
      ctx = new AC();
    }
    master = ctx.createGain();
    master.gain.value = dbToGain(masterDB);
    master.connect(ctx.destination);
    return ctx;
  }

  function load(audio, sample) {
    const id = audio.sampleRate + ":" + sample;
    if (!buffers.has(id)) {
      buffers.set(id, fetch(encodeURI(sample))
        .then((r) => { if (!r.ok) throw new Error(sample + ": " + r.status + " " + r.statusText); return r.arrayBuffer(); })
        .then((bytes) => audio.decodeAudioData(bytes)));
    }
    return buffers.get(id);
  }

  // startVoice plays region r for key from time when into dest: pitched
  // by 2^((key − root)/12), looping from loop_start to loop_end, which
  // SFZ counts inclusive, so the loop ends after frame loop_end.
  function startVoice(audio, dest, r, buffer, key, when) {
    const src = audio.createBufferSource();
    src.buffer = buffer;
    src.playbackRate.value = Math.pow(2, (key - r.root) / 12);
    const looped = (r.loopMode === "loop_sustain" || r.loopMode === "loop_continuous") && r.loopEnd > r.loopStart;
    if (looped) {
      src.loop = true;
      src.loopStart = r.loopStart / buffer.sampleRate;
      src.loopEnd = (r.loopEnd + 1) / buffer.sampleRate;
    }
    const amp = audio.createGain();
    amp.gain.value = dbToGain(r.volume);
    src.connect(amp);
    amp.connect(dest);
    src.start(when);
    return { src, amp, region: r, key, looped };
  }

  // releaseVoice lets a voice go at time when: loop_sustain leaves the
  // loop and plays on into the release the file holds, and the level
  // falls to nothing over ampeg_release, in a straight line (from
  // memory: how SFZ players shape the release stage).
  function releaseVoice(v, when) {
    if (v.looped && v.region.loopMode === "loop_sustain") v.src.loop = false;
    const g = v.amp.gain;
    g.cancelScheduledValues(when);
    g.setValueAtTime(g.value, when);
    g.linearRampToValueAtTime(0, when + v.region.release);
    v.src.stop(when + v.region.release + 0.01);
  }

  function setStatus(text) { el("status").textContent = text; }

  function noteOn(key, velocity) {
    if (voices.has(key)) return;
    const regions = regionsFor(key, velocity);
    if (regions.length === 0) {
      setStatus(noteName(key) + " (" + key + ") at velocity " + velocity + ": no region of the mapping answers it.");
      return;
    }
    keyElement(key, (b) => b.classList.add("down"));
    if (!served) {
      setStatus("Opened as a file, the page cannot load samples: serve the folder with sinter serve to play " + regions.map((r) => r.sample).join(", ") + ".");
      voices.set(key, []);
      return;
    }
    const audio = context();
    if (audio.state === "suspended") audio.resume();
    const list = [];
    voices.set(key, list);
    for (const r of regions) {
      load(audio, r.sample).then((buffer) => {
        if (voices.get(key) !== list) return; // let go before the sample arrived
        const v = startVoice(audio, master, r, buffer, key, audio.currentTime);
        list.push(v);
        if (record.length >= 1000) record.shift(); // a long session keeps the latest notes only
        record.push({
          key, velocity, sample: r.sample, root: r.root, line: r.line,
          playbackRate: v.src.playbackRate.value, loop: v.src.loop,
          loopStart: v.src.loopStart, loopEnd: v.src.loopEnd, bufferRate: buffer.sampleRate,
          gain: v.amp.gain.value, master: master.gain.value, release: r.release,
        });
        setStatus("Playing " + noteName(key) + " (" + key + "), velocity " + velocity + ": " + r.sample + (key === r.root ? " at its root" : " from root " + noteName(r.root) + ", pitched " + (key - r.root) + " semitones") + ".");
      }).catch((err) => setStatus("Cannot play " + r.sample + ": " + err.message));
    }
  }

  function noteOff(key) {
    const list = voices.get(key);
    if (!list) return;
    voices.delete(key);
    keyElement(key, (b) => b.classList.remove("down"));
    if (ctx) for (const v of list) releaseVoice(v, ctx.currentTime);
  }

  function allOff() { for (const key of [...voices.keys()]) noteOff(key); }

  // ---- The keyboard ---------------------------------------------------
  const keys = data.regions.length ? {
    lo: Math.min(...data.regions.map((r) => r.lokey)),
    hi: Math.max(...data.regions.map((r) => r.hikey)),
  } : { lo: 60, hi: 72 };
  const roots = new Set(data.regions.map((r) => r.root));
  let velocity = 100;
  let octave = Math.max(-1, Math.min(8, Math.floor((keys.lo + keys.hi) / 24) - 1)); // the C of the typed octave is 12·(octave+1)

  function keyElement(key, fn) {
    const b = document.querySelector('.key[data-key="' + key + '"]');
    if (b) fn(b);
  }

  function buildKeyboard() {
    const board = el("keyboard");
    const count = keys.hi - keys.lo + 1;
    board.style.gridTemplateColumns = "repeat(" + count + ", minmax(1.6rem, 2.4rem))";
    // Zones: one per distinct key range, labelled with its root.
    const zones = new Map();
    for (const r of data.regions) zones.set(r.lokey + "-" + r.hikey, r);
    [...zones.values()].sort((a, b) => a.lokey - b.lokey).forEach((r) => {
      const z = document.createElement("div");
      z.className = "zone";
      z.style.gridColumn = (r.lokey - keys.lo + 1) + " / " + (r.hikey - keys.lo + 2);
      z.textContent = noteName(r.root);
      z.title = "Keys " + noteName(r.lokey) + "–" + noteName(r.hikey) + " play the root " + noteName(r.root) + " (" + r.root + ")";
      board.appendChild(z);
    });
    for (let k = keys.lo; k <= keys.hi; k++) {
      const b = document.createElement("button");
      b.type = "button";
      b.className = "key" + (isBlack(k) ? " black" : "") + (roots.has(k) ? " root" : "");
      b.dataset.key = k;
      b.style.gridColumn = String(k - keys.lo + 1);
      b.textContent = k % 12 === 0 ? noteName(k) : "";
      b.setAttribute("aria-label", noteName(k) + ", MIDI key " + k + (roots.has(k) ? ", a root" : ""));
      const key = k;
      b.addEventListener("pointerdown", (e) => { e.preventDefault(); b.setPointerCapture(e.pointerId); noteOn(key, velocity); });
      b.addEventListener("pointerup", () => noteOff(key));
      b.addEventListener("pointercancel", () => noteOff(key));
      b.addEventListener("keydown", (e) => { if ((e.key === "Enter" || e.key === " ") && !e.repeat) { e.preventDefault(); e.stopPropagation(); noteOn(key, velocity); } });
      b.addEventListener("keyup", (e) => { if (e.key === "Enter" || e.key === " ") { e.stopPropagation(); noteOff(key); } });
      board.appendChild(b);
    }
    showOctave();
  }

  function showOctave() {
    const c = 12 * (octave + 1);
    el("octave-range").textContent = noteName(c) + " to " + noteName(c + 12);
    document.querySelectorAll(".key.typed").forEach((b) => b.classList.remove("typed"));
    for (let k = c; k <= c + 12; k++) keyElement(k, (b) => b.classList.add("typed"));
  }

  function shiftOctave(by) {
    allOff();
    octave = Math.max(-1, Math.min(8, octave + by));
    showOctave();
  }

  // Typed keys: a row of letters plays an octave from C (common practice).
  const typed = new Map(); // letter -> key it started
  document.addEventListener("keydown", (e) => {
    if (e.repeat || e.ctrlKey || e.metaKey || e.altKey) return;
    if (e.target instanceof HTMLInputElement) return;
    const letter = e.key.toLowerCase();
    const what = data.keys[letter];
    if (what === undefined) return;
    e.preventDefault();
    if (what === "octave down") return shiftOctave(-1);
    if (what === "octave up") return shiftOctave(1);
    if (typed.has(letter)) return;
    const key = 12 * (octave + 1) + Number(what);
    if (key < 0 || key > 127) return;
    typed.set(letter, key);
    noteOn(key, velocity);
  });
  document.addEventListener("keyup", (e) => {
    const letter = e.key.toLowerCase();
    if (!typed.has(letter)) return;
    noteOff(typed.get(letter));
    typed.delete(letter);
  });
  window.addEventListener("blur", () => { typed.clear(); allOff(); });

  // ---- Controls ---------------------------------------------------------
  function showVolume() {
    el("volume-value").textContent = (masterDB < 0 ? "−" + (-masterDB) : String(masterDB)) + " dB";
    if (master) master.gain.setValueAtTime(dbToGain(masterDB), ctx.currentTime);
  }
  el("volume").addEventListener("input", (e) => { masterDB = Number(e.target.value); showVolume(); });
  function layerOf(v) {
    const r = data.regions.find((x) => v >= x.lovel && v <= x.hivel);
    return r ? " (layer " + r.lovel + "–" + r.hivel + ")" : " (no layer)";
  }
  el("velocity").addEventListener("input", (e) => {
    velocity = Number(e.target.value);
    el("velocity-value").textContent = velocity + layerOf(velocity);
  });
  el("velocity-value").textContent = velocity + layerOf(velocity);
  el("octave-down").addEventListener("click", () => shiftOctave(-1));
  el("octave-up").addEventListener("click", () => shiftOctave(1));
  el("all-off").addEventListener("click", allOff);

  // Web MIDI, where the browser offers it, asked for only when the
  // listener presses the button.
  const midiButton = el("midi");
  if (!navigator.requestMIDIAccess || !served) {
    midiButton.disabled = true;
    midiButton.textContent = served ? "No Web MIDI in this browser" : "MIDI needs the page served";
  } else {
    midiButton.addEventListener("click", () => {
      navigator.requestMIDIAccess().then((access) => {
        const listen = () => {
          let n = 0;
          for (const input of access.inputs.values()) {
            n++;
            input.onmidimessage = (m) => {
              const [status, key, vel] = m.data;
              const kind = status & 0xf0;
              if (kind === 0x90 && vel > 0) noteOn(key, vel);
              else if (kind === 0x80 || (kind === 0x90 && vel === 0)) noteOff(key);
            };
          }
          setStatus(n ? "Listening to " + n + " MIDI input" + (n > 1 ? "s" : "") + "; the velocity comes from the keyboard." : "No MIDI input is connected.");
        };
        access.onstatechange = listen;
        listen();
      }).catch((err) => setStatus("MIDI is not available: " + err.message));
    });
  }

  // ---- Figures ----------------------------------------------------------
  const fmt = (v, digits) => (v <= -200 ? "silent" : v.toFixed(digits));
  function over(file) {
    // The measure the ceiling is set in: sample peak for dBFS, true peak
    // for dBTP.
    const level = data.ceiling.unit === "dBTP" ? file.true_peak_dbtp : file.peak_dbfs;
    return level > data.ceiling.level + 1e-9;
  }
  function cell(row, text, marked, why) {
    const td = document.createElement("td");
    td.textContent = text;
    if (marked) {
      td.classList.add("over");
      const m = document.createElement("span");
      m.className = "mark";
      m.textContent = "▲";
      m.setAttribute("role", "img");
      m.setAttribute("aria-label", why);
      m.title = why;
      td.appendChild(m);
    }
    row.appendChild(td);
  }
  function showPicture(file, row) {
    document.querySelectorAll("#files tr.selected").forEach((r) => r.classList.remove("selected"));
    row.classList.add("selected");
    const v = el("viewer");
    v.hidden = false;
    el("viewer-img").src = encodeURI(file.picture);
    el("viewer-img").alt = "Spectrum and one period of " + file.path;
    el("viewer-caption").textContent = file.path + ": spectrum and one period, measured from the file.";
    v.scrollIntoView({ block: "nearest" });
  }
  function buildTable() {
    const body = document.querySelector("#files tbody");
    let marks = 0;
    for (const f of data.files) {
      const row = document.createElement("tr");
      const name = document.createElement("td");
      name.textContent = f.path;
      row.appendChild(name);
      const pic = document.createElement("td");
      if (f.picture) {
        const b = document.createElement("button");
        b.type = "button";
        b.setAttribute("aria-label", "Show the picture of " + f.path);
        const img = document.createElement("img");
        img.src = encodeURI(f.picture);
        img.alt = "";
        img.loading = "lazy";
        b.appendChild(img);
        b.addEventListener("click", () => showPicture(f, row));
        pic.appendChild(b);
      } else {
        pic.textContent = "none";
      }
      row.appendChild(pic);
      cell(row, f.note + " (" + f.key + ")");
      cell(row, f.velocity + " (" + f.velocity_range[0] + "–" + f.velocity_range[1] + ")");
      cell(row, f.variation + " of " + f.variations);
      const isOver = over(f);
      const why = "over the ceiling of " + data.ceiling.level + " " + data.ceiling.unit;
      cell(row, fmt(f.peak_dbfs, 2), isOver && data.ceiling.unit === "dBFS", why);
      cell(row, fmt(f.true_peak_dbtp, 2), isOver && data.ceiling.unit === "dBTP", why);
      cell(row, fmt(f.loudness_lufs, 2));
      cell(row, f.gain_db.toFixed(2));
      if (f.loop) {
        cell(row, f.loop.start + "–" + f.loop.end);
        cell(row, f.loop.pitch_error_cents.toFixed(4));
        cell(row, f.loop.seam_ratio.toFixed(3), f.loop.seam_ratio > 1, "seam ratio above 1: the loop's seam steps further than any step inside it");
        if (f.loop.seam_ratio > 1) marks++;
      } else {
        cell(row, "no loop");
        cell(row, "");
        cell(row, "");
      }
      if (isOver) marks++;
      body.appendChild(row);
    }
    el("files-note").textContent = data.files.length + " files. Ceiling " + data.ceiling.level + " " + data.ceiling.unit +
      "; levelling: " + data.levelling + ". " + (marks ? marks + " marked ▲: over the ceiling, or a seam ratio above 1." : "Nothing over the ceiling, no seam ratio above 1.");
    for (const n of data.notices) {
      const li = document.createElement("li");
      li.textContent = n;
      el("notices").appendChild(li);
    }
  }

  // ---- Start --------------------------------------------------------------
  el("set-name").textContent = data.name;
  document.title = data.name + ": sample set review";
  el("set-summary").textContent = data.files.length + " files, " + data.sampleRate + " Hz, " + (data.channels === 2 ? "stereo" : "mono") +
    "; mapping " + data.mapping + " with " + data.regions.length + " regions over keys " + noteName(keys.lo) + "–" + noteName(keys.hi) +
    "; longest release " + data.release + " s.";
  el("caution-text").textContent = data.caution;
  el("footer").textContent = "Written by sinter " + data.sinter + ". Everything on this page comes from this folder.";
  if (!served) {
    el("file-notice").hidden = false;
    const path = decodeURIComponent(location.pathname).replace(/\/[^/]*$/, "");
    el("serve-dir").textContent = path || "DIR";
  }
  buildKeyboard();
  buildTable();
  showVolume();

  // ---- The hook for tests ---------------------------------------------
  // What each note played, and an offline rendering of a held key through
  // the same voice code, so a test can compare the page with the mapping
  // and the files.
  window.sinterPage = {
    played: () => record.slice(),
    masterGain: () => dbToGain(masterDB),
    // render plays key at velocity in an OfflineAudioContext at the set's
    // rate for seconds, released at release seconds (never, if later),
    // straight to the output without the volume control, and returns the
    // voice and each channel's samples as base64 of float32.
    render: async (key, vel, seconds, release) => {
      const rate = data.sampleRate;
      const audio = new OfflineAudioContext(data.channels, Math.round(seconds * rate), rate);
      const regions = regionsFor(key, vel);
      const list = [];
      for (const r of regions) {
        const buffer = await load(audio, r.sample);
        list.push(startVoice(audio, audio.destination, r, buffer, key, 0));
      }
      if (release < seconds) {
        audio.suspend(release).then(() => { for (const v of list) releaseVoice(v, release); audio.resume(); });
      }
      const out = await audio.startRendering();
      const channels = [];
      for (let c = 0; c < out.numberOfChannels; c++) {
        const bytes = new Uint8Array(out.getChannelData(c).buffer);
        let s = "";
        for (let i = 0; i < bytes.length; i += 0x8000) s += String.fromCharCode.apply(null, bytes.subarray(i, i + 0x8000));
        channels.push(btoa(s));
      }
      return {
        voices: list.map((v) => ({ sample: v.region.sample, root: v.region.root, playbackRate: v.src.playbackRate.value,
          loopStart: v.src.loopStart, loopEnd: v.src.loopEnd, gain: v.amp.gain.value, bufferRate: v.src.buffer.sampleRate })),
        sampleRate: out.sampleRate, channels,
      };
    },
  };
})();
