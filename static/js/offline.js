// Survey work without a signal.
//
// - Registers the service worker (/sw.js) and asks it to keep the pages of the
//   building or area being looked at, so they open later without a connection.
// - A fixture form saved without a connection is checked here (the API's
//   limits, read from /offline/rules/fixture.json, and its rules across
//   fields) and kept in IndexedDB: one entry per change, with the client-made
//   UUID of a new fixture, or the version an edit started from.
// - When the connection returns (the online event, a retry every 20 s while
//   something waits, or "Sync now") the entries are sent in order, one at a
//   time. An entry leaves this tablet only once the server has confirmed it
//   (201, or 200: already there). Before sending, an entry is marked
//   "sending"; after a crash it is sent again, which the server recognises.
//   A stale edit (409) waits for the surveyor to choose, with both values
//   shown; refused input (422) waits to be corrected.
// - Keeps the indicator under the top bar up to date.
(function () {
  "use strict";

  var DB_NAME = "planner-offline";
  var DB_VERSION = 1;
  var QUEUE = "queue";
  var META = "meta";
  var PROBE_TIMEOUT_MS = 5000;
  var SEND_TIMEOUT_MS = 20000;
  var RETRY_MS = 20000;
  var RECENT_KEPT = 30;
  var FLASH_KEY = "planner-offline-flash";
  var LOCK_NAME = "planner-offline-sync";
  var FORM_LEVEL = "__form__";
  var TRUE_WORDS = ["true", "on", "yes", "1"];
  var UUID_PATH = "[0-9a-f-]{36}";
  var AREA_PAGE = new RegExp("^/areas/(" + UUID_PATH + ")$");
  var BUILDING_PAGE = new RegExp("^/buildings/(" + UUID_PATH + ")$");
  var COPIES_ACTION = new RegExp("^/areas/(" + UUID_PATH + ")/fixtures/copies$");
  var RULES_URL = "/offline/rules/fixture.json";
  var PENDING = ["waiting", "sending"];
  var ATTENTION = ["conflict", "invalid", "refused"];
  // The page's own wording of a pattern the schema only states as a regular expression.
  var PATTERN_MESSAGES = { pack_date_code: "Use the four digits on the pack, like 1834." };

  var bar = document.getElementById("sync-bar");
  var channel = typeof BroadcastChannel === "function" ? new BroadcastChannel("planner-offline") : null;
  var connection = navigator.onLine ? "checking" : "offline";
  var progress = null;
  var running = null;
  var lastReport = "";
  var rulesCache = {};
  var maxCopies = 50;

  // ---------------------------------------------------------------- storage

  var dbPromise = null;

  function openDb() {
    if (!dbPromise) {
      dbPromise = new Promise(function (resolve, reject) {
        var request = indexedDB.open(DB_NAME, DB_VERSION);
        request.onupgradeneeded = function () {
          var db = request.result;
          if (!db.objectStoreNames.contains(QUEUE)) {
            db.createObjectStore(QUEUE, { keyPath: "seq", autoIncrement: true });
          }
          if (!db.objectStoreNames.contains(META)) {
            db.createObjectStore(META);
          }
        };
        request.onsuccess = function () { resolve(request.result); };
        request.onerror = function () { reject(request.error); };
      });
    }
    return dbPromise;
  }

  // Run ``work(store)`` in one transaction; resolve with its result once committed.
  function inStore(name, mode, work) {
    return openDb().then(function (db) {
      return new Promise(function (resolve, reject) {
        var tx = db.transaction(name, mode);
        var result;
        tx.oncomplete = function () { resolve(result); };
        tx.onerror = function () { reject(tx.error); };
        tx.onabort = function () { reject(tx.error || new Error("storage transaction aborted")); };
        var request = work(tx.objectStore(name));
        if (request) {
          request.onsuccess = function () { result = request.result; };
        }
      });
    });
  }

  function allEntries() {
    return inStore(QUEUE, "readonly", function (store) { return store.getAll(); })
      .then(function (entries) {
        return (entries || []).sort(function (a, b) { return a.seq - b.seq; });
      });
  }

  function getEntry(seq) {
    return inStore(QUEUE, "readonly", function (store) { return store.get(seq); });
  }

  function putEntry(entry) {
    return inStore(QUEUE, "readwrite", function (store) { return store.put(entry); });
  }

  function deleteEntry(seq) {
    return inStore(QUEUE, "readwrite", function (store) { return store.delete(seq); });
  }

  function getMeta(key) {
    return inStore(META, "readonly", function (store) { return store.get(key); });
  }

  function setMeta(key, value) {
    return inStore(META, "readwrite", function (store) { return store.put(value, key); });
  }

  function announce() {
    if (channel) {
      channel.postMessage({ type: "changed" });
    }
  }

  // ---------------------------------------------------------------- helpers

  function newUuid() {
    if (window.crypto && typeof window.crypto.randomUUID === "function") {
      return window.crypto.randomUUID();
    }
    var bytes = new Uint8Array(16);
    window.crypto.getRandomValues(bytes);
    bytes[6] = (bytes[6] & 0x0f) | 0x40;
    bytes[8] = (bytes[8] & 0x3f) | 0x80;
    var hex = Array.prototype.map.call(bytes, function (b) { return (b + 0x100).toString(16).slice(1); }).join("");
    return hex.slice(0, 8) + "-" + hex.slice(8, 12) + "-" + hex.slice(12, 16) + "-" +
      hex.slice(16, 20) + "-" + hex.slice(20);
  }

  function currentUser() {
    return bar ? bar.getAttribute("data-user-id") || "" : "";
  }

  function mine(entries) {
    var user = currentUser();
    return entries.filter(function (entry) { return entry.userId === user; });
  }

  function same(a, b) {
    if (a === b) {
      return true;
    }
    if (a === undefined || b === undefined) {
      return a === b || a === null || b === null;
    }
    if (typeof a === "number" && typeof b === "number") {
      return Math.abs(a - b) < 1e-9;
    }
    return JSON.stringify(a) === JSON.stringify(b);
  }

  function element(tag, className, text) {
    var node = document.createElement(tag);
    if (className) {
      node.className = className;
    }
    if (text !== undefined && text !== null) {
      node.textContent = text;
    }
    return node;
  }

  function plural(count, one, many) {
    return count + " " + (count === 1 ? one : many);
  }

  function when(ms) {
    var date = new Date(ms);
    var time = date.toLocaleTimeString([], { hour: "2-digit", minute: "2-digit" });
    var today = new Date();
    if (date.toDateString() === today.toDateString()) {
      return "today " + time;
    }
    return date.toLocaleDateString([], { day: "numeric", month: "short" }) + " " + time;
  }

  function timeout(ms) {
    var controller = typeof AbortController === "function" ? new AbortController() : null;
    var timer = controller ? window.setTimeout(function () { controller.abort(); }, ms) : null;
    return {
      signal: controller ? controller.signal : undefined,
      done: function () { if (timer) { window.clearTimeout(timer); } }
    };
  }

  function sentence(text) {
    text = String(text || "").trim().replace(/^Value error, /, "");
    var head = /^([A-Za-z_][A-Za-z0-9_]*): (.*)$/.exec(text);
    if (head) {
      text = head[2];
    }
    if (!text) {
      return "Check this value.";
    }
    text = text.charAt(0).toUpperCase() + text.slice(1);
    return /[.!?]$/.test(text) ? text : text + ".";
  }

  // ---------------------------------------------------------------- the form's fields

  function controlsOf(form, name) {
    var control = form.elements.namedItem(name);
    if (!control) {
      return [];
    }
    return control instanceof RadioNodeList ? Array.prototype.slice.call(control) : [control];
  }

  function rawValue(form, name) {
    var controls = controlsOf(form, name);
    if (!controls.length) {
      return null;
    }
    if (controls[0].type === "radio" || controls[0].type === "checkbox") {
      var checked = controls.filter(function (control) { return control.checked; });
      return checked.length ? checked[0].value : "";
    }
    return controls[0].value;
  }

  function rawValues(form, rules) {
    var raw = {};
    Object.keys(rules).forEach(function (name) {
      var value = rawValue(form, name);
      if (value !== null) {
        raw[name] = value;
      }
    });
    return raw;
  }

  function fillForm(form, raw) {
    Object.keys(raw).forEach(function (name) {
      controlsOf(form, name).forEach(function (control) {
        if (control.type === "radio" || control.type === "checkbox") {
          control.checked = control.value === raw[name];
        } else {
          control.value = raw[name];
        }
      });
    });
  }

  function fieldBox(form, name) {
    var controls = controlsOf(form, name);
    return controls.length ? controls[0].closest(".field") : null;
  }

  function labelOf(form, name) {
    var box = fieldBox(form, name);
    var label = null;
    if (box) {
      label = box.tagName === "FIELDSET" ? box.querySelector("legend") : box.querySelector("label[for]");
    }
    if (!label) {
      return name;
    }
    var copy = label.cloneNode(true);
    Array.prototype.forEach.call(copy.querySelectorAll(".required"), function (node) { node.remove(); });
    return copy.textContent.replace(/\s+/g, " ").trim();
  }

  function optionsOf(form, name) {
    var options = {};
    controlsOf(form, name).forEach(function (control) {
      if (control.tagName === "SELECT") {
        Array.prototype.forEach.call(control.options, function (option) {
          options[option.value] = option.textContent.trim();
        });
      } else if (control.type === "radio") {
        var text = control.parentElement && control.parentElement.querySelector("span");
        options[control.value] = text ? text.textContent.trim() : control.value;
      }
    });
    return Object.keys(options).length ? options : null;
  }

  function describe(form, rules) {
    var labels = {};
    var options = {};
    Object.keys(rules).forEach(function (name) {
      labels[name] = labelOf(form, name);
      var known = optionsOf(form, name);
      if (known) {
        options[name] = known;
      }
    });
    return { labels: labels, options: options };
  }

  function clearErrors(form) {
    Array.prototype.forEach.call(form.querySelectorAll("[data-offline-error]"), function (node) { node.remove(); });
    Array.prototype.forEach.call(form.querySelectorAll(".field.has-error"), function (box) {
      box.classList.remove("has-error");
      Array.prototype.forEach.call(box.querySelectorAll("[aria-invalid]"), function (control) {
        control.removeAttribute("aria-invalid");
      });
    });
  }

  function showErrors(form, errors, summary) {
    clearErrors(form);
    var first = null;
    Object.keys(errors).forEach(function (name) {
      var box = fieldBox(form, name);
      if (!box) {
        return;
      }
      box.classList.add("has-error");
      var message = element("p", "field-error", errors[name]);
      message.id = name + "-offline-error";
      message.setAttribute("data-offline-error", "");
      box.appendChild(message);
      controlsOf(form, name).forEach(function (control) {
        control.setAttribute("aria-invalid", "true");
        var described = (control.getAttribute("aria-describedby") || "").split(" ").filter(Boolean);
        if (described.indexOf(message.id) < 0) {
          described.push(message.id);
        }
        control.setAttribute("aria-describedby", described.join(" "));
      });
      first = first || controlsOf(form, name)[0];
    });
    var others = Object.keys(errors).filter(function (name) { return !fieldBox(form, name); });
    var text = summary + others.map(function (name) { return " " + errors[name]; }).join("");
    note(form, text, "error");
    if (first) {
      first.focus();
    }
  }

  function note(form, text, kind) {
    var box = form.querySelector("#offline-note");
    if (!box) {
      return;
    }
    box.className = "offline-note notice " + (kind || "info");
    box.textContent = "";
    if (text) {
      box.appendChild(element("p", "", text));
    }
    box.hidden = !text;
  }

  // ---------------------------------------------------------------- local checks

  function limitText(value) {
    return String(value);
  }

  // The typed form as the API would read it: {values, errors}. Blank fields take
  // null (where allowed) or the schema's default; the messages are the pages'.
  function convert(raw, rules) {
    var values = {};
    var errors = {};
    Object.keys(rules).forEach(function (name) {
      var rule = rules[name];
      var typed = raw[name] === undefined || raw[name] === null ? "" : String(raw[name]);
      var text = typed.trim();
      if (rule.kind === "bool") {
        values[name] = TRUE_WORDS.indexOf(text.toLowerCase()) >= 0;
        return;
      }
      if (rule.kind === "number" || rule.kind === "whole") {
        text = text.replace(/,/g, ".").replace(/\s+/g, "");
      }
      if (!text) {
        if (rule.required) {
          errors[name] = "Enter a value.";
        } else if (rule.nullable) {
          values[name] = null;
        } else if ("default" in rule) {
          values[name] = rule["default"];
        } else {
          values[name] = "";
        }
        return;
      }
      var value = text;
      if (text.indexOf("\u0000") >= 0) {
        // The API refuses NUL characters everywhere (the database cannot store them).
        errors[name] = "Text may not contain a NUL character.";
        return;
      }
      if (rule.kind === "number" || rule.kind === "whole") {
        if (!/^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/.test(text)) {
          errors[name] = rule.kind === "whole" ? "Enter a whole number." : "Enter a number, like 36 or 12.5.";
          return;
        }
        value = Number(text);
        if (rule.kind === "whole" && !Number.isInteger(value)) {
          errors[name] = "Enter a whole number.";
          return;
        }
        if ("gt" in rule && !(value > rule.gt)) {
          errors[name] = "Enter a number above " + limitText(rule.gt) + ".";
        } else if ("ge" in rule && !(value >= rule.ge)) {
          errors[name] = "Enter " + limitText(rule.ge) + " or more.";
        } else if ("lt" in rule && !(value < rule.lt)) {
          errors[name] = "Enter a number below " + limitText(rule.lt) + ".";
        } else if ("le" in rule && !(value <= rule.le)) {
          errors[name] = "Enter " + limitText(rule.le) + " or less.";
        }
      } else if (rule.kind === "choice") {
        if ((rule.choices || []).indexOf(text) < 0) {
          errors[name] = "Choose one of the options.";
        }
      } else if (rule.kind === "date") {
        var parsed = /^(\d{4})-(\d{2})-(\d{2})$/.exec(text);
        var date = parsed ? new Date(Date.UTC(+parsed[1], +parsed[2] - 1, +parsed[3])) : null;
        if (!date || date.getUTCDate() !== +parsed[3] || date.getUTCMonth() !== +parsed[2] - 1) {
          errors[name] = "Enter a date.";
        }
      } else {
        if ("max_length" in rule && text.length > rule.max_length) {
          errors[name] = "Use at most " + rule.max_length + " characters.";
        } else if ("min_length" in rule && text.length < rule.min_length) {
          errors[name] = "Enter a value.";
        } else if (rule.pattern && !new RegExp(rule.pattern).test(text)) {
          errors[name] = PATTERN_MESSAGES[name] || "This does not look right: check it against the label.";
        }
      }
      if (!errors[name]) {
        values[name] = value;
      }
    });
    crossChecks(values, errors);
    return { values: values, errors: errors };
  }

  function known(values, errors, names) {
    return names.every(function (name) { return !errors[name] && values[name] !== undefined; });
  }

  // The fixture schema's rules across fields (server/sites/schemas.py, FixtureCreate):
  // each names the field it is shown beside, as the API does.
  function crossChecks(values, errors) {
    if (known(values, errors, ["lamps_to_back_up", "lamp_count"]) && values.lamps_to_back_up > values.lamp_count) {
      errors.lamps_to_back_up = "Cannot back up more lamps than the fixture holds (" +
        values.lamps_to_back_up + " > " + values.lamp_count + " lamps).";
    }
    if (known(values, errors, ["wiring", "lamp_count"]) && values.wiring === "series" && values.lamp_count < 2) {
      errors.wiring = "Series wiring needs at least two lamps: choose 2 or more lamps in the fixture.";
    }
    if (known(values, errors, ["open_circuit_v", "loaded_v"]) && values.open_circuit_v !== null &&
        values.loaded_v !== null && values.loaded_v > values.open_circuit_v) {
      errors.loaded_v = "The loaded reading (" + values.loaded_v + " V) cannot be above the open-circuit reading (" +
        values.open_circuit_v + " V); check the meter leads.";
    }
    if (known(values, errors, ["load_a", "load_ohm"]) && values.load_a !== null && values.load_ohm !== null) {
      errors.load_a = "Give the load test's current or its resistor, not both.";
    }
    if (known(values, errors, ["pack_date_code", "pack_date_format"]) && values.pack_date_code &&
        values.pack_date_format === null) {
      errors.pack_date_format = "Say how the date code reads (YYWW, WWYY, MMYY or YYMM).";
    }
  }

  function loadRules(url) {
    if (!rulesCache[url]) {
      rulesCache[url] = fetch(url, { credentials: "same-origin", headers: { Accept: "application/json" } })
        .then(function (response) {
          if (!response.ok) {
            throw new Error("rules unavailable");
          }
          return response.json();
        })
        .then(function (data) {
          maxCopies = data.max_copies || maxCopies;
          return data.fields;
        })
        .catch(function (error) {
          delete rulesCache[url];
          throw error;
        });
    }
    return rulesCache[url];
  }

  // ---------------------------------------------------------------- tags

  function nextTag(tag, taken) {
    var match = /^(.*?)(\d+)(\D*)$/.exec(tag);
    var head = tag + "-";
    var tail = "";
    var number = 1;
    var width = 1;
    if (match) {
      head = match[1];
      number = parseInt(match[2], 10);
      width = match[2].length;
      tail = match[3];
    }
    for (;;) {
      number += 1;
      var digits = String(number);
      while (digits.length < width) {
        digits = "0" + digits;
      }
      if (!taken[head + digits + tail]) {
        return head + digits + tail;
      }
    }
  }

  // ---------------------------------------------------------------- connection

  // Ask the server who is signed in: {status: online | offline | signed-out, session}.
  function probe() {
    if (!navigator.onLine) {
      return Promise.resolve({ status: "offline" });
    }
    var limit = timeout(PROBE_TIMEOUT_MS);
    return fetch("/offline/session", {
      credentials: "same-origin",
      cache: "no-store",
      headers: { Accept: "application/json" },
      signal: limit.signal
    }).then(function (response) {
      if (response.status === 401) {
        return { status: "signed-out" };
      }
      if (!response.ok) {
        return { status: "offline" };
      }
      return response.json().then(function (session) { return { status: "online", session: session }; });
    }, function () {
      return { status: "offline" };
    }).then(function (result) {
      limit.done();
      return result;
    });
  }

  function setConnection(state) {
    connection = state;
    refresh();
    updateForms();
  }

  // ---------------------------------------------------------------- saving a form into the queue

  function formKind(form) {
    return /\/fixtures$/.test(form.getAttribute("data-offline-api") || "") ? "create" : "edit";
  }

  function recordIdOf(form) {
    var control = form.elements.namedItem("id");
    return control ? control.value : "";
  }

  function versionOf(form) {
    var control = form.elements.namedItem("version");
    var version = control ? parseInt(control.value, 10) : NaN;
    return isNaN(version) ? null : version;
  }

  function changedValues(original, values) {
    var changes = {};
    Object.keys(values).forEach(function (name) {
      if (!same(original[name], values[name])) {
        changes[name] = values[name];
      }
    });
    return changes;
  }

  function flash(text) {
    try {
      window.sessionStorage.setItem(FLASH_KEY, text);
    } catch (error) {
      // Private mode without session storage: the list still shows the change.
    }
  }

  function rememberStorage() {
    if (navigator.storage && typeof navigator.storage.persist === "function") {
      navigator.storage.persist().catch(function () { return false; });
    }
  }

  // Keep the form's change on this tablet. ``why`` is offline, signed-out or queued.
  function keepForm(form, why) {
    var rulesUrl = form.getAttribute("data-offline-rules");
    return loadRules(rulesUrl).then(function (rules) {
      var raw = rawValues(form, rules);
      var checked = convert(raw, rules);
      if (Object.keys(checked.errors).length) {
        showErrors(form, checked.errors, "Nothing was kept: correct the fields marked below.");
        return null;
      }
      clearErrors(form);
      var kind = formKind(form);
      var words = describe(form, rules);
      var seqText = form.getAttribute("data-queued-seq");
      var existing = seqText ? getEntry(Number(seqText)) : Promise.resolve(null);
      return existing.then(function (entry) {
        var now = Date.now();
        var recordId = recordIdOf(form);
        var original = form.__offlineOriginal || {};
        if (entry && entry.state === "sending") {
          // Already on its way: this save follows it as a change of its own,
          // starting from what that one will have stored.
          if (entry.kind === "create") {
            kind = "edit";
            original = entry.values;
          }
          entry = null;
        }
        if (!entry) {
          entry = {
            kind: kind,
            recordId: recordId,
            areaId: form.getAttribute("data-area-id"),
            areaName: form.getAttribute("data-area-name") || "",
            buildingName: form.getAttribute("data-building-name") || "",
            userId: currentUser(),
            savedAt: now,
            attempts: 0
          };
          if (kind === "edit") {
            entry.version = versionOf(form) || 1;
            entry.original = original;
          }
        }
        entry.raw = raw;
        entry.labels = words.labels;
        entry.options = words.options;
        entry.tag = checked.values.tag;
        entry.updatedAt = now;
        entry.state = "waiting";
        entry.errors = null;
        entry.current = null;
        entry.message = "";
        if (entry.kind === "create") {
          entry.url = "/api/v1/areas/" + entry.areaId + "/fixtures";
          entry.values = checked.values;
        } else {
          entry.url = "/api/v1/fixtures/" + entry.recordId;
          entry.changes = changedValues(entry.original || {}, checked.values);
          entry.values = checked.values;
          if (!Object.keys(entry.changes).length) {
            if (entry.seq) {
              return deleteEntry(entry.seq).then(function () { return { entry: entry, unchanged: true }; });
            }
            return { entry: entry, unchanged: true };
          }
        }
        return putEntry(entry).then(function (seq) {
          entry.seq = seq;
          rememberStorage();
          announce();
          return { entry: entry, why: why };
        });
      });
    }, function () {
      note(form, "This form cannot be kept on this tablet yet: open it once with a connection. " +
        "Nothing was saved; your entries are still in the form.", "error");
      return null;
    });
  }

  function afterKeeping(form, kept) {
    var entry = kept.entry;
    var tag = entry.tag || "";
    var text;
    if (kept.unchanged) {
      text = "Fixture " + tag + ": nothing was changed, so nothing waits to be sent.";
    } else if (kept.why === "signed-out") {
      text = "Fixture " + tag + " saved on this tablet. Sign in again to send it; it stays here until then.";
    } else if (kept.why === "offline") {
      text = "Fixture " + tag + " saved on this tablet. It will be sent when the connection returns; " +
        "its checks run then.";
    } else {
      text = "Fixture " + tag + " saved.";
    }
    var area = "/areas/" + entry.areaId;
    if (kept.why !== "queued" || kept.unchanged) {
      flash(text);
      window.location.assign(area);
      return Promise.resolve();
    }
    return syncNow().then(function () {
      return getEntry(entry.seq);
    }).then(function (left) {
      if (left) {
        flash("Fixture " + tag + " saved on this tablet; it is not sent yet (see Changes on this tablet).");
        window.location.assign(area);
      } else {
        window.location.assign(area + "?saved=" + encodeURIComponent(entry.recordId));
      }
    });
  }

  function decide(form) {
    if (form.hasAttribute("data-queued-seq")) {
      return Promise.resolve("queued");
    }
    return probe().then(function (result) {
      if (result.status === "online") {
        if (connection !== "online") {
          setConnection("online");
        }
        return "post";
      }
      setConnection(result.status);
      return result.status;
    });
  }

  function submitFixture(event, form) {
    event.preventDefault();
    if (form.getAttribute("data-offline-busy") === "yes") {
      return;
    }
    form.setAttribute("data-offline-busy", "yes");
    var submitter = event.submitter;
    decide(form).then(function (route) {
      if (route === "post") {
        form.removeAttribute("data-offline-busy");
        form.setAttribute("data-offline-pass", "yes");
        if (submitter && typeof form.requestSubmit === "function") {
          form.requestSubmit(submitter);
        } else if (typeof form.requestSubmit === "function") {
          form.requestSubmit();
        } else {
          form.submit();
        }
        return null;
      }
      return keepForm(form, route).then(function (kept) {
        form.removeAttribute("data-offline-busy");
        return kept ? afterKeeping(form, kept) : null;
      });
    }).catch(function () {
      form.removeAttribute("data-offline-busy");
      note(form, "This tablet's storage refused the change. Nothing was saved; your entries are still " +
        "in the form.", "error");
    });
  }

  function pageMessage(text, kind) {
    var main = document.getElementById("main");
    if (!main) {
      return;
    }
    var box = document.getElementById("offline-page-message");
    if (!box) {
      box = element("div", "");
      box.id = "offline-page-message";
      box.setAttribute("role", kind === "error" ? "alert" : "status");
      var head = main.querySelector(".page-head");
      if (head && head.nextSibling) {
        main.insertBefore(box, head.nextSibling);
      } else {
        main.insertBefore(box, main.firstChild);
      }
    }
    box.className = "notice " + (kind || "info");
    box.textContent = "";
    box.appendChild(element("p", "", text));
    if (kind === "warn" || kind === "error") {
      box.scrollIntoView({ block: "nearest" });
    }
  }

  function onSubmit(event) {
    var form = event.target;
    if (!(form instanceof HTMLFormElement)) {
      return;
    }
    if (form.getAttribute("data-offline-pass") === "yes") {
      form.removeAttribute("data-offline-pass");
      return;
    }
    if (form.hasAttribute("data-offline-form")) {
      submitFixture(event, form);
      return;
    }
    var method = (form.getAttribute("method") || "get").toLowerCase();
    if (method !== "post") {
      return;
    }
    var copies = COPIES_ACTION.exec(form.getAttribute("action") || "");
    if (copies && bar) {
      submitCopies(event, form, copies[1]);
      return;
    }
    if (!navigator.onLine) {
      event.preventDefault();
      pageMessage("No connection: this needs the server, so nothing was sent and nothing changed. " +
        "Fixtures can be recorded without a connection with Add fixture; this works again when the " +
        "indicator shows Online.", "warn");
      return;
    }
    if ((form.getAttribute("action") || "") === "/signout") {
      signOut(event, form);
    }
  }

  // ---------------------------------------------------------------- repeat last, add copies

  function shownRaw(values) {
    var raw = {};
    Object.keys(values).forEach(function (name) {
      var value = values[name];
      raw[name] = value === null || value === undefined ? "" : String(value);
    });
    return raw;
  }

  function serverRows() {
    return Array.prototype.filter.call(document.querySelectorAll(".rows > .row > a[href^='/fixtures/']"),
      function (link) { return !link.closest("#offline-area-waiting"); });
  }

  // The area's last fixture, as repeat-last copies it: the newest kept on this
  // tablet, else the last in the list (read from its kept fixture page).
  function lastOfArea(areaId, entries) {
    var creates = entries.filter(function (entry) { return entry.kind === "create" && entry.areaId === areaId; });
    if (creates.length) {
      var last = creates[creates.length - 1];
      return Promise.resolve({ values: last.values, labels: last.labels, options: last.options });
    }
    var rows = serverRows();
    if (!rows.length) {
      return Promise.resolve(null);
    }
    var page = fetch(rows[rows.length - 1].getAttribute("href"), {
      credentials: "same-origin", headers: { Accept: "text/html" }
    }).then(function (response) { return response.ok ? response.text() : ""; });
    return Promise.all([page, loadRules(RULES_URL)]).then(function (found) {
      var doc = new DOMParser().parseFromString(found[0], "text/html");
      var form = doc.querySelector("form[data-offline-form]");
      if (!form) {
        return null;
      }
      var checked = convert(rawValues(form, found[1]), found[1]);
      if (Object.keys(checked.errors).length) {
        return null;
      }
      var words = describe(form, found[1]);
      return { values: checked.values, labels: words.labels, options: words.options };
    });
  }

  function tagsOfArea(areaId, entries) {
    var taken = {};
    serverRows().forEach(function (link) {
      var tag = link.querySelector(".row-tag");
      if (tag) {
        taken[tag.textContent.trim()] = true;
      }
    });
    entries.forEach(function (entry) {
      if (entry.kind === "create" && entry.areaId === areaId) {
        taken[entry.tag] = true;
      }
    });
    return taken;
  }

  function keepCopies(form, areaId) {
    var countField = form.elements.namedItem("count");
    var text = String(countField ? countField.value : "1").trim();
    return Promise.all([allEntries(), loadRules(RULES_URL)]).then(function (found) {
      var entries = mine(found[0]);
      var count = /^\d+$/.test(text) ? parseInt(text, 10) : NaN;
      if (!(count >= 1 && count <= maxCopies)) {
        pageMessage("Nothing was added: enter a whole number from 1 to " + maxCopies + ".", "error");
        return null;
      }
      return lastOfArea(areaId, entries).then(function (source) {
        if (!source) {
          pageMessage("Nothing was added: survey one fixture first, or open the last one once with a " +
            "connection so this tablet keeps it.", "error");
          return null;
        }
        var taken = tagsOfArea(areaId, entries);
        var tag = source.values.tag;
        var crumb = document.querySelector(".crumbs a[href^='/buildings/']");
        var heading = document.querySelector("main h1");
        var now = Date.now();
        var made = [];
        for (var index = 0; index < count; index += 1) {
          tag = nextTag(tag, taken);
          taken[tag] = true;
          var values = {};
          Object.keys(source.values).forEach(function (name) { values[name] = source.values[name]; });
          values.tag = tag;
          made.push({
            kind: "create",
            recordId: newUuid(),
            areaId: areaId,
            areaName: heading ? heading.textContent.trim() : "",
            buildingName: crumb ? crumb.textContent.trim() : "",
            userId: currentUser(),
            savedAt: now,
            updatedAt: now,
            attempts: 0,
            url: "/api/v1/areas/" + areaId + "/fixtures",
            values: values,
            raw: shownRaw(values),
            labels: source.labels,
            options: source.options,
            tag: tag,
            state: "waiting"
          });
        }
        return made.reduce(function (chain, entry) {
          return chain.then(function () { return putEntry(entry); });
        }, Promise.resolve()).then(function () {
          rememberStorage();
          announce();
          return made;
        });
      });
    });
  }

  function submitCopies(event, form, areaId) {
    event.preventDefault();
    if (form.getAttribute("data-offline-busy") === "yes") {
      return;
    }
    form.setAttribute("data-offline-busy", "yes");
    var route = navigator.onLine ? probe().then(function (result) { return result.status; }) : Promise.resolve("offline");
    route.then(function (status) {
      if (status === "online") {
        form.removeAttribute("data-offline-busy");
        form.setAttribute("data-offline-pass", "yes");
        form.requestSubmit(event.submitter || undefined);
        return null;
      }
      setConnection(status);
      return keepCopies(form, areaId).then(function (made) {
        form.removeAttribute("data-offline-busy");
        if (!made) {
          return;
        }
        var first = made[0].tag;
        var last = made[made.length - 1].tag;
        flash((made.length === 1 ? "Fixture " + first + " added" : made.length + " fixtures added: " + first +
          " to " + last) + " on this tablet. They are sent when the connection returns; their checks run then.");
        window.location.assign(window.location.pathname);
      });
    }).catch(function () {
      form.removeAttribute("data-offline-busy");
      pageMessage("This tablet's storage refused the copies. Nothing was added.", "error");
    });
  }

  // With fixtures kept here, the repeat button names the tablet's last one.
  function relabelRepeat(areaId, entries) {
    var creates = entries.filter(function (entry) { return entry.kind === "create" && entry.areaId === areaId; });
    var button = document.getElementById("repeat-last");
    if (!creates.length || !button) {
      return;
    }
    var last = creates[creates.length - 1].tag;
    var next = nextTag(last, tagsOfArea(areaId, entries));
    button.textContent = "Repeat last fixture (" + last + " → " + next + ")";
    var label = document.querySelector("label[for='copy-count']");
    if (label) {
      label.textContent = "Add identical copies of " + last + ":";
    }
  }

  function signOut(event, form) {
    event.preventDefault();
    allEntries().then(function (entries) {
      var waiting = mine(entries).length;
      if (waiting && !window.confirm(plural(waiting, "change is", "changes are") + " not on the server yet. " +
          (waiting === 1 ? "It stays" : "They stay") + " on this tablet and " + (waiting === 1 ? "is" : "are") +
          " sent when you sign in here again. Sign out?")) {
        return false;
      }
      return forgetPages().then(function () { return true; });
    }, function () { return true; }).then(function (go) {
      if (go) {
        form.setAttribute("data-offline-pass", "yes");
        form.requestSubmit();
      }
    });
  }

  // ---------------------------------------------------------------- sending

  function pickNext(entries, userId) {
    var blocked = {};
    for (var index = 0; index < entries.length; index += 1) {
      var entry = entries[index];
      if (entry.userId !== userId) {
        continue;
      }
      if (PENDING.indexOf(entry.state) >= 0 && !blocked[entry.recordId]) {
        return entry;
      }
      blocked[entry.recordId] = true;
    }
    return null;
  }

  function bodyOf(entry) {
    var body = {};
    var source = entry.kind === "create" ? entry.values : entry.changes;
    Object.keys(source).forEach(function (name) { body[name] = source[name]; });
    if (entry.kind === "create") {
      body.id = entry.recordId;
    } else {
      body.version = entry.version;
    }
    return body;
  }

  function fieldErrors(detail, entry) {
    var errors = {};
    (Array.isArray(detail) ? detail : []).forEach(function (item) {
      var loc = (item.loc || []).filter(function (part) { return typeof part === "string"; });
      var name = loc.length ? loc[loc.length - 1] : FORM_LEVEL;
      if (!(entry.labels && entry.labels[name])) {
        name = FORM_LEVEL;
      }
      if (!errors[name]) {
        errors[name] = sentence(item.msg);
      }
    });
    if (!Array.isArray(detail) && detail) {
      errors[FORM_LEVEL] = sentence(detail);
    }
    return errors;
  }

  function readJson(response) {
    return response.text().then(function (text) {
      try {
        return text ? JSON.parse(text) : null;
      } catch (error) {
        return null;
      }
    });
  }

  function fetchCurrent(entry) {
    return fetch("/api/v1/fixtures/" + entry.recordId, {
      credentials: "same-origin", cache: "no-store", headers: { Accept: "application/json" }
    }).then(function (response) {
      return response.ok ? response.json() : null;
    });
  }

  function remember(entry, how) {
    return getMeta("recent").then(function (recent) {
      recent = Array.isArray(recent) ? recent : [];
      recent.unshift({ tag: entry.tag, areaName: entry.areaName, kind: entry.kind, how: how, at: Date.now() });
      return setMeta("recent", recent.slice(0, RECENT_KEPT));
    });
  }

  // The server has the change: the entry goes, and later edits of the same record
  // (saved while this one was on its way) now start from the version it made.
  function acknowledge(entry, record, how, report) {
    return deleteEntry(entry.seq).then(function () {
      return allEntries();
    }).then(function (entries) {
      var updates = entries.filter(function (other) {
        return other.recordId === entry.recordId && other.kind === "edit" && record && record.version &&
          (entry.kind === "create" || other.version === entry.version);
      }).map(function (other) {
        other.version = record.version;
        return putEntry(other);
      });
      return Promise.all(updates);
    }).then(function () {
      report[how] += 1;
      report.areas[entry.areaId] = true;
      report.fixtures[entry.recordId] = true;
      return remember(entry, how);
    });
  }

  function setState(entry, state, extra) {
    entry.state = state;
    Object.keys(extra || {}).forEach(function (key) { entry[key] = extra[key]; });
    return putEntry(entry);
  }

  function allSame(values, current) {
    return Object.keys(values).every(function (name) { return same(values[name], current[name]); });
  }

  function onConflict(entry, data, report) {
    var current = data && data.current ? Promise.resolve(data.current) : fetchCurrent(entry);
    return current.then(function (record) {
      if (!record) {
        report.problems += 1;
        return setState(entry, "refused", {
          refusedStatus: 409,
          message: "The server refused this id: " + sentence(data && data.detail) +
            " Remove it here, or save it again as a new fixture."
        });
      }
      var mineValues = entry.kind === "create" ? entry.values : entry.changes;
      if (allSame(mineValues, record)) {
        // What this tablet sent is what is stored: an earlier send arrived.
        return acknowledge(entry, record, "already", report);
      }
      report.problems += 1;
      return setState(entry, "conflict", {
        current: record,
        message: entry.kind === "create"
          ? "A fixture with this id is already on the server with other values (an earlier send " +
            "arrived, then this one was changed)."
          : "Someone else saved this fixture after this tablet read it (it is now at version " +
            record.version + ", this change started from version " + entry.version + ")."
      });
    });
  }

  // Send one entry. Resolves to "next" to go on, or "stop" to wait for a better connection.
  function send(entry, session, report) {
    entry.attempts = (entry.attempts || 0) + 1;
    return setState(entry, "sending", { lastError: "" }).then(function () {
      var limit = timeout(SEND_TIMEOUT_MS);
      return fetch(entry.url, {
        method: entry.kind === "create" ? "POST" : "PATCH",
        credentials: "same-origin",
        cache: "no-store",
        headers: {
          "Content-Type": "application/json",
          Accept: "application/json",
          "X-CSRF-Token": session.csrf_token
        },
        body: JSON.stringify(bodyOf(entry)),
        signal: limit.signal
      }).then(function (response) {
        limit.done();
        return readJson(response).then(function (data) { return { status: response.status, data: data }; });
      }, function () {
        limit.done();
        return { status: 0, data: null };
      });
    }).then(function (answer) {
      var status = answer.status;
      var data = answer.data;
      if (status === 201 || status === 200) {
        // 200 to a create: an earlier send of it arrived. 200 to an edit: done now.
        var how = status === 200 && entry.kind === "create" ? "already" : "sent";
        return acknowledge(entry, data, how, report).then(function () { return "next"; });
      }
      if (status === 409) {
        return onConflict(entry, data, report).then(function () { return "next"; });
      }
      if (status === 422) {
        report.problems += 1;
        return setState(entry, "invalid", {
          errors: fieldErrors(data && data.detail, entry),
          message: "The server did not accept these values; correct them and save again."
        }).then(function () { return "next"; });
      }
      if (status === 404 || (status === 403 && !/CSRF/i.test(String(data && data.detail)))) {
        report.problems += 1;
        return setState(entry, "refused", {
          refusedStatus: status,
          message: status === 404
            ? (entry.kind === "create"
              ? "The area this fixture belongs to is no longer on the server."
              : "This fixture is no longer on the server (deleted by someone else).")
            : sentence(data && data.detail)
        }).then(function () { return "next"; });
      }
      var why = status === 0
        ? "The connection dropped while sending; it will be sent again."
        : status === 401 ? "Signed out: sign in again to send it."
          : "The server could not take it just now (HTTP " + status + "); it will be tried again.";
      return setState(entry, "waiting", { lastError: why }).then(function () {
        report.stopped = status === 401 ? "signed-out" : status === 0 ? "offline" : "retry";
        return "stop";
      });
    });
  }

  function withLock(work) {
    if (navigator.locks && typeof navigator.locks.request === "function") {
      return navigator.locks.request(LOCK_NAME, { ifAvailable: true }, function (lock) {
        return lock ? work() : { skipped: true };
      });
    }
    return work();
  }

  function runSync() {
    return probe().then(function (result) {
      setConnection(result.status);
      var report = {
        sent: 0,
        already: 0,
        problems: 0,
        areas: {},
        fixtures: {},
        stopped: result.status === "online" ? "" : result.status
      };
      if (result.status !== "online") {
        return report;
      }
      var userId = result.session.user_id;
      function step() {
        return allEntries().then(function (entries) {
          var next = pickNext(entries, userId);
          if (!next) {
            return report;
          }
          var left = entries.filter(function (entry) {
            return entry.userId === userId && PENDING.indexOf(entry.state) >= 0;
          }).length;
          progress = { done: report.sent + report.already, left: left };
          refresh();
          return send(next, result.session, report).then(function (outcome) {
            return outcome === "stop" ? report : step();
          });
        });
      }
      return step().then(function () {
        if (!report.stopped) {
          return setMeta("lastSyncAt", Date.now()).then(function () { return report; });
        }
        if (report.stopped !== "retry") {
          setConnection(report.stopped);
        }
        return report;
      });
    });
  }

  function describeReport(report) {
    var parts = [];
    if (report.sent) {
      parts.push(plural(report.sent, "change", "changes") + " sent");
    }
    if (report.already) {
      parts.push(plural(report.already, "was", "were") + " already on the server (kept once)");
    }
    if (report.problems) {
      parts.push(plural(report.problems, "needs", "need") + " you: see Changes on this tablet");
    }
    return parts.join("; ");
  }

  function syncNow() {
    if (running) {
      return running;
    }
    running = Promise.resolve().then(function () {
      return withLock(runSync);
    }).then(function (report) {
      progress = null;
      if (report && !report.skipped) {
        var text = describeReport(report);
        if (text) {
          lastReport = text + ".";
        }
        var areas = Object.keys(report.areas || {});
        if (areas.length) {
          // The kept copies of what changed are fetched again, and the new fixtures' forms kept.
          var changed = areas.map(function (id) { return "/areas/" + id; }).concat(
            Object.keys(report.fixtures).map(function (id) { return "/fixtures/" + id; }));
          tellWorker({
            type: "warm",
            refresh: changed,
            pages: areas.map(function (id) { return { path: "/areas/" + id, depth: 1 }; })
          }).then(function () {
            document.documentElement.setAttribute("data-offline-refreshed", String(Date.now()));
          });
          afterSyncOnPage(areas);
        }
        if (report.sent || report.already || report.problems) {
          announce();
        }
      }
      return report;
    }, function () {
      progress = null;
      return null;
    }).then(function (report) {
      running = null;
      refresh();
      renderPageLists();
      return report;
    });
    return running;
  }

  // ---------------------------------------------------------------- the indicator

  function refresh() {
    if (!bar) {
      return Promise.resolve();
    }
    return Promise.all([allEntries(), getMeta("lastSyncAt")]).then(function (found) {
      var entries = mine(found[0]);
      var lastSyncAt = found[1];
      var waiting = entries.filter(function (entry) { return PENDING.indexOf(entry.state) >= 0; }).length;
      var attention = entries.filter(function (entry) { return ATTENTION.indexOf(entry.state) >= 0; }).length;
      var others = found[0].length - entries.length;
      var state = connection;
      var word = {
        checking: "Checking the connection",
        online: "Online",
        offline: "Offline: changes are kept on this tablet",
        "signed-out": "Signed out: sign in to send changes"
      }[connection] || "Online";
      if (running && progress && connection === "online") {
        state = "syncing";
        word = "Sending " + (progress.done + 1) + " of " + (progress.done + progress.left);
      }
      if (connection === "online" && !running && document.documentElement.getAttribute("data-offline-ready") === "yes" &&
          !waiting && !attention) {
        word = "Online · this page is kept for use offline";
      }
      bar.setAttribute("data-state", attention ? "attention" : state);
      bar.setAttribute("data-waiting", String(waiting));
      bar.setAttribute("data-attention", String(attention));
      document.getElementById("sync-state").textContent = word;
      var decide = plural(attention, "change needs", "changes need") + " your decision";
      var count = "No changes waiting";
      if (waiting) {
        count = plural(waiting, "change", "changes") + " waiting" +
          (attention ? " · " + plural(attention, "needs", "need") + " your decision" : "");
      } else if (attention) {
        count = decide;
      }
      if (others) {
        count += " · " + others + " of another sign-in";
      }
      document.getElementById("sync-waiting").textContent = count;
      document.getElementById("sync-last").textContent = lastSyncAt ? when(lastSyncAt) : "not yet on this tablet";
      var button = document.getElementById("sync-now");
      button.disabled = Boolean(running);
      button.setAttribute("aria-busy", running ? "true" : "false");
      var message = document.getElementById("sync-message");
      message.textContent = lastReport;
      message.hidden = !lastReport;
      bar.hidden = false;
    }).catch(function () {
      bar.hidden = false;
      bar.setAttribute("data-state", "attention");
      document.getElementById("sync-state").textContent = "This browser keeps no offline storage: work online only";
    });
  }

  // ---------------------------------------------------------------- the service worker

  function registerWorker() {
    if (!("serviceWorker" in navigator)) {
      return Promise.resolve(null);
    }
    return navigator.serviceWorker.register("/sw.js", { scope: "/" }).then(function () {
      return navigator.serviceWorker.ready;
    }).catch(function () { return null; });
  }

  function tellWorker(message) {
    if (!("serviceWorker" in navigator)) {
      return Promise.resolve(null);
    }
    return navigator.serviceWorker.ready.then(function (registration) {
      return new Promise(function (resolve) {
        var port = new MessageChannel();
        var timer = window.setTimeout(function () { resolve(null); }, 60000);
        port.port1.onmessage = function (event) {
          window.clearTimeout(timer);
          resolve(event.data);
        };
        registration.active.postMessage(message, [port.port2]);
      });
    });
  }

  function forgetPages() {
    var forget = tellWorker({ type: "forget" });
    var limit = new Promise(function (resolve) { window.setTimeout(resolve, 1500); });
    return Promise.race([forget, limit]);
  }

  // Pages kept for someone else who used this tablet before are not kept for this user.
  function forgetAnotherUsersPages() {
    return getMeta("pagesUser").then(function (user) {
      if (user === currentUser()) {
        return null;
      }
      return (user ? forgetPages() : Promise.resolve()).then(function () {
        return setMeta("pagesUser", currentUser());
      });
    }).catch(function () { return null; });
  }

  function warmThisPage() {
    var path = window.location.pathname;
    var depth = BUILDING_PAGE.test(path) ? 2 : AREA_PAGE.test(path) ? 1 : 0;
    var pages = [
      { path: path, depth: depth },
      { path: "/offline/changes", depth: 0 },
      { path: "/offline/rules/fixture.json", depth: 0 }
    ];
    return tellWorker({ type: "warm", pages: pages }).then(function (answer) {
      if (answer && answer.type === "warmed") {
        document.documentElement.setAttribute("data-offline-ready", "yes");
        refresh();
      }
    });
  }

  // ---------------------------------------------------------------- the fixture form

  function updateForms() {
    var offline = connection === "offline" || !navigator.onLine;
    Array.prototype.forEach.call(document.querySelectorAll("form[data-offline-form]"), function (form) {
      var button = form.querySelector("button[type=submit].primary") || form.querySelector("button[type=submit]");
      if (button) {
        if (!button.hasAttribute("data-online-label")) {
          button.setAttribute("data-online-label", button.textContent);
        }
        button.textContent = offline ? "Save on this tablet" : button.getAttribute("data-online-label");
      }
    });
    var findings = document.getElementById("findings");
    if (findings && offline && document.querySelector("form[data-offline-form]")) {
      notYetChecked(findings);
    } else if (findings && findings.hasAttribute("data-offline-unchecked") && !offline) {
      findings.removeAttribute("data-offline-unchecked");
      var form = document.querySelector("form[data-offline-form]");
      if (form) {
        form.dispatchEvent(new Event("input", { bubbles: true }));
      }
    }
  }

  function notYetChecked(findings) {
    if (findings.querySelector(".offline-unchecked")) {
      return;
    }
    findings.setAttribute("data-offline-unchecked", "");
    findings.textContent = "";
    var box = element("div", "notice info offline-unchecked");
    box.appendChild(element("p", "", "Not yet checked."));
    box.appendChild(element("p", "", "The checks run on the server. Without a connection they wait: " +
      "this fixture's findings show here, and on its proposal, once it has been synced."));
    findings.appendChild(box);
  }

  function applyEntry(form, entry, rules) {
    fillForm(form, entry.raw || {});
    var id = form.elements.namedItem("id");
    if (id && entry.kind === "create") {
      id.value = entry.recordId;
    }
    form.setAttribute("data-queued-seq", String(entry.seq));
    if (entry.kind === "edit") {
      form.__offlineOriginal = entry.original || {};
    }
    var saved = "saved on this tablet " + when(entry.updatedAt || entry.savedAt);
    if (entry.state === "invalid" && entry.errors) {
      var errors = {};
      Object.keys(entry.errors).forEach(function (name) {
        if (rules[name]) {
          errors[name] = entry.errors[name];
        }
      });
      showErrors(form, errors, "The server did not accept this change (" + saved + "): correct the " +
        "fields marked below and save again." + (entry.errors[FORM_LEVEL] ? " " + entry.errors[FORM_LEVEL] : ""));
    } else if (entry.state === "conflict") {
      note(form, "This change (" + saved + ") waits for your decision because someone else changed the " +
        "fixture: see Changes on this tablet. Saving here keeps it waiting with your new values.", "warn");
    } else {
      note(form, "Showing your change " + saved + "; it is not on the server yet. Saving again replaces it.",
        "info");
    }
  }

  function setupForm(form) {
    var kind = formKind(form);
    var startRaw = null;
    if (kind === "create") {
      var id = form.elements.namedItem("id");
      if (id) {
        // A kept copy of this page carries the id it was first drawn with: every
        // new fixture needs its own.
        id.value = newUuid();
      }
    }
    var rulesUrl = form.getAttribute("data-offline-rules");
    loadRules(rulesUrl).then(function (rules) {
      startRaw = rawValues(form, rules);
      form.__offlineOriginal = convert(startRaw, rules).values;
      return allEntries().then(function (entries) {
        entries = mine(entries);
        var params = new URLSearchParams(window.location.search);
        var wanted = params.get("queued");
        var entry = null;
        if (wanted) {
          entry = entries.filter(function (item) { return String(item.seq) === wanted; })[0] || null;
        } else if (kind === "edit") {
          var recordId = recordIdOf(form);
          entry = entries.filter(function (item) {
            return item.recordId === recordId && item.state !== "sending";
          }).pop() || null;
        }
        var fits = entry && entry.areaId === form.getAttribute("data-area-id") &&
          (kind === "create" ? entry.kind === "create" : entry.recordId === recordIdOf(form));
        if (fits) {
          applyEntry(form, entry, rules);
        } else if (kind === "create") {
          suggestTag(form, entries);
        }
      });
    }).catch(function () { return null; });
    updateForms();
  }

  function suggestTag(form, entries) {
    var areaId = form.getAttribute("data-area-id");
    var creates = entries.filter(function (entry) { return entry.kind === "create" && entry.areaId === areaId; });
    var field = form.elements.namedItem("tag");
    if (!creates.length || !field) {
      return;
    }
    var taken = {};
    creates.forEach(function (entry) { taken[entry.tag] = true; });
    if (taken[field.value]) {
      field.value = nextTag(creates[creates.length - 1].tag, taken);
    }
  }

  // ---------------------------------------------------------------- the area page

  function summaryOf(entry) {
    var values = entry.values || {};
    var parts = [];
    if (values.lamp_count && values.lamp_type) {
      parts.push(values.lamp_count + " × " + values.lamp_type + (values.lamp_w ? " " + values.lamp_w + " W" : ""));
    }
    if (values.location) {
      parts.push(values.location);
    }
    return parts.join(" · ");
  }

  function stateWord(entry) {
    return {
      waiting: "Waiting to send",
      sending: "Sending",
      conflict: "Needs your decision",
      invalid: "Needs correcting",
      refused: "Not accepted"
    }[entry.state] || entry.state;
  }

  function editLink(entry) {
    return entry.kind === "create"
      ? "/areas/" + entry.areaId + "/fixtures/new?queued=" + entry.seq
      : "/fixtures/" + entry.recordId + "?queued=" + entry.seq;
  }

  function entryRow(entry) {
    var row = element("li", "row offline-row");
    row.setAttribute("data-state", entry.state);
    var link = element("a", "");
    link.href = editLink(entry);
    link.appendChild(element("span", "row-tag", entry.tag || "?"));
    var main = element("span", "row-main", (entry.kind === "create" ? "New: " : "Changed: ") + summaryOf(entry));
    main.appendChild(element("span", "muted", "Saved on this tablet " + when(entry.updatedAt || entry.savedAt) +
      " · not yet checked" + (entry.lastError ? " · " + entry.lastError : "")));
    link.appendChild(main);
    var end = element("span", "row-end");
    end.appendChild(element("span", "badge " + (ATTENTION.indexOf(entry.state) >= 0 ? "warn" : "none"), stateWord(entry)));
    link.appendChild(end);
    row.appendChild(link);
    return row;
  }

  function renderAreaWaiting(areaId, entries) {
    var main = document.getElementById("main");
    if (!main) {
      return;
    }
    var section = document.getElementById("offline-area-waiting");
    var own = entries.filter(function (entry) { return entry.areaId === areaId; });
    Array.prototype.forEach.call(document.querySelectorAll(".rows a[data-offline-marked]"), function (link) {
      link.removeAttribute("data-offline-marked");
      var badge = link.querySelector(".offline-badge");
      if (badge) {
        badge.remove();
      }
    });
    own.filter(function (entry) { return entry.kind === "edit"; }).forEach(function (entry) {
      var link = document.querySelector('.rows a[href="/fixtures/' + entry.recordId + '"]');
      if (link && !link.hasAttribute("data-offline-marked")) {
        link.setAttribute("data-offline-marked", "");
        var end = link.querySelector(".row-end") || link;
        end.appendChild(element("span", "badge warn offline-badge", "Changed on this tablet"));
      }
    });
    if (!own.length) {
      if (section) {
        section.remove();
      }
      return;
    }
    if (!section) {
      section = element("section", "offline-waiting");
      section.id = "offline-area-waiting";
      section.setAttribute("aria-labelledby", "offline-area-waiting-title");
      var anchor = main.querySelector(".rows") || main.querySelector(".empty") || main.querySelector(".cautions");
      if (anchor) {
        main.insertBefore(section, anchor);
      } else {
        main.appendChild(section);
      }
    }
    section.textContent = "";
    var title = element("h2", "", "On this tablet, not on the server yet (" + own.length + ")");
    title.id = "offline-area-waiting-title";
    section.appendChild(title);
    var list = element("ul", "rows");
    list.setAttribute("aria-labelledby", title.id);
    own.forEach(function (entry) { list.appendChild(entryRow(entry)); });
    section.appendChild(list);
  }

  function afterSyncOnPage(areas) {
    var match = AREA_PAGE.exec(window.location.pathname);
    if (match && areas.indexOf(match[1]) >= 0) {
      var link = element("a", "", "Show them in the list");
      link.href = window.location.pathname;
      pageMessage("Changes from this tablet reached the server. ", "success");
      document.getElementById("offline-page-message").firstChild.appendChild(link);
    }
  }

  function showFlash() {
    var text = null;
    try {
      text = window.sessionStorage.getItem(FLASH_KEY);
      window.sessionStorage.removeItem(FLASH_KEY);
    } catch (error) {
      text = null;
    }
    if (text) {
      pageMessage(text, "success");
    }
  }

  // ---------------------------------------------------------------- the changes page

  function valueText(entry, name, value) {
    if (value === null || value === undefined || value === "") {
      return "(empty)";
    }
    var options = entry.options && entry.options[name];
    var key = String(value);
    if (options && options[key]) {
      return options[key];
    }
    if (typeof value === "boolean") {
      return value ? "Yes" : "No";
    }
    return key;
  }

  function labelText(entry, name) {
    return (entry.labels && entry.labels[name]) || name;
  }

  function compareTable(entry) {
    var current = entry.current || {};
    var yours = entry.kind === "create" ? entry.values : entry.changes;
    var wrap = element("div", "table-fit");
    var table = element("table", "table offline-compare");
    table.appendChild(element("caption", "", "Fixture " + (entry.tag || "") + ": your values and the stored ones"));
    var head = element("thead");
    var headRow = element("tr");
    ["Field", "Yours, on this tablet", "Stored now on the server"].forEach(function (text) {
      var cell = element("th", "", text);
      cell.setAttribute("scope", "col");
      headRow.appendChild(cell);
    });
    head.appendChild(headRow);
    table.appendChild(head);
    var body = element("tbody");
    Object.keys(yours || {}).forEach(function (name) {
      if (same(yours[name], current[name])) {
        return;
      }
      var row = element("tr", "offline-differs");
      var field = element("th", "", labelText(entry, name));
      field.setAttribute("scope", "row");
      row.appendChild(field);
      row.appendChild(element("td", "offline-yours", valueText(entry, name, yours[name])));
      row.appendChild(element("td", "offline-theirs", valueText(entry, name, current[name])));
      body.appendChild(row);
    });
    table.appendChild(body);
    wrap.appendChild(table);
    return wrap;
  }

  function alsoChanged(entry) {
    if (entry.kind !== "edit" || !entry.current) {
      return null;
    }
    var names = Object.keys(entry.original || {}).filter(function (name) {
      return !(name in entry.changes) && name in entry.current && !same(entry.original[name], entry.current[name]);
    });
    if (!names.length) {
      return null;
    }
    return element("p", "muted", "Also changed on the server, and kept whichever you choose: " +
      names.map(function (name) {
        return labelText(entry, name) + " (now " + valueText(entry, name, entry.current[name]) + ")";
      }).join(", ") + ".");
  }

  function actionButton(text, action, entry, className) {
    var button = element("button", className || "", text);
    button.type = "button";
    button.setAttribute("data-offline-action", action);
    button.setAttribute("data-seq", String(entry.seq));
    return button;
  }

  function changeCard(entry) {
    var card = element("article", "card offline-change");
    card.setAttribute("data-state", entry.state);
    card.setAttribute("data-seq", String(entry.seq));
    var head = element("div", "offline-change-head");
    head.appendChild(element("span", "row-tag", entry.tag || "?"));
    head.appendChild(element("span", "offline-where", (entry.kind === "create" ? "New fixture in " : "Change to a fixture in ") +
      entry.areaName + (entry.buildingName ? ", " + entry.buildingName : "")));
    head.appendChild(element("span", "badge " + (ATTENTION.indexOf(entry.state) >= 0 ? "warn" : "none"), stateWord(entry)));
    card.appendChild(head);
    card.appendChild(element("p", "muted", "Saved on this tablet " + when(entry.updatedAt || entry.savedAt) +
      (entry.attempts ? " · sent " + plural(entry.attempts, "time", "times") : "") +
      (entry.lastError ? " · " + entry.lastError : "")));
    if (entry.message) {
      card.appendChild(element("p", "", entry.message));
    }
    var actions = element("div", "toolbar offline-actions");
    if (entry.state === "conflict") {
      card.appendChild(compareTable(entry));
      var also = alsoChanged(entry);
      if (also) {
        card.appendChild(also);
      }
      actions.appendChild(actionButton("Keep mine (send it again)", "keep-mine", entry, "primary"));
      actions.appendChild(actionButton("Keep theirs (drop mine)", "keep-theirs", entry, "quiet"));
    } else if (entry.state === "invalid") {
      var list = element("ul", "offline-errors");
      Object.keys(entry.errors || {}).forEach(function (name) {
        list.appendChild(element("li", "field-error", (name === FORM_LEVEL ? "" : labelText(entry, name) + ": ") +
          entry.errors[name]));
      });
      card.appendChild(list);
      actions.appendChild(editAnchor(entry, "Correct it", "button primary"));
      actions.appendChild(actionButton("Remove from this tablet", "remove", entry, "danger"));
    } else if (entry.state === "refused") {
      if ((entry.kind === "edit" && entry.refusedStatus === 404) ||
          (entry.kind === "create" && entry.refusedStatus === 409)) {
        actions.appendChild(actionButton("Save it as a new fixture", "as-new", entry, "primary"));
      }
      actions.appendChild(actionButton("Remove from this tablet", "remove", entry, "danger"));
    } else {
      actions.appendChild(editAnchor(entry, "Open it", "button quiet"));
    }
    card.appendChild(actions);
    return card;
  }

  function editAnchor(entry, text, className) {
    var link = element("a", className, text);
    link.href = editLink(entry);
    return link;
  }

  function group(title, id, cards) {
    var section = element("section", "offline-group");
    section.setAttribute("aria-labelledby", id);
    var heading = element("h2", "", title + " (" + cards.length + ")");
    heading.id = id;
    section.appendChild(heading);
    cards.forEach(function (card) { section.appendChild(card); });
    return section;
  }

  function renderChanges(container, entries, recent) {
    container.textContent = "";
    var own = mine(entries);
    var others = entries.length - own.length;
    var sets = [
      ["Needs your decision", "offline-decide", own.filter(function (e) { return e.state === "conflict"; })],
      ["Needs correcting", "offline-correct", own.filter(function (e) { return e.state === "invalid"; })],
      ["Not accepted by the server", "offline-refused", own.filter(function (e) { return e.state === "refused"; })],
      ["Waiting to send", "offline-waiting", own.filter(function (e) { return PENDING.indexOf(e.state) >= 0; })]
    ];
    var shown = 0;
    sets.forEach(function (set) {
      if (set[2].length) {
        container.appendChild(group(set[0], set[1], set[2].map(changeCard)));
        shown += set[2].length;
      }
    });
    if (!shown) {
      container.appendChild(element("p", "card empty", "Nothing waits on this tablet: the server has every change made here."));
    }
    if (others) {
      container.appendChild(element("p", "notice info", plural(others, "change was", "changes were") +
        " saved here under another sign-in. They are sent when that person signs in on this tablet."));
    }
    if (recent && recent.length) {
      var section = element("section", "offline-group offline-recent");
      section.setAttribute("aria-labelledby", "offline-recent-title");
      var heading = element("h2", "", "Recently settled");
      heading.id = "offline-recent-title";
      section.appendChild(heading);
      var list = element("ul", "offline-recent-list");
      recent.forEach(function (item) {
        var how = {
          sent: "reached the server",
          already: "was already on the server: kept once",
          theirs: "your change was dropped at your choice; the stored values stay",
          removed: "removed from this tablet at your choice"
        }[item.how] || item.how;
        list.appendChild(element("li", "", (item.tag || "?") + " (" + (item.areaName || "") + "): " + how + ", " + when(item.at)));
      });
      section.appendChild(list);
      container.appendChild(section);
    }
  }

  function renderPageLists() {
    var container = document.querySelector("[data-offline-changes]");
    var areaMatch = AREA_PAGE.exec(window.location.pathname);
    if (!container && !areaMatch) {
      return Promise.resolve();
    }
    return Promise.all([allEntries(), getMeta("recent")]).then(function (found) {
      if (container) {
        renderChanges(container, found[0], found[1]);
      }
      if (areaMatch) {
        renderAreaWaiting(areaMatch[1], mine(found[0]));
        relabelRepeat(areaMatch[1], mine(found[0]));
      }
    }).catch(function () { return null; });
  }

  function keepMine(entry) {
    var current = entry.current || {};
    if (entry.kind === "create") {
      entry.kind = "edit";
      entry.url = "/api/v1/fixtures/" + entry.recordId;
      entry.original = current;
      entry.changes = changedValues(current, entry.values);
    }
    entry.version = current.version;
    entry.current = null;
    entry.message = "";
    entry.state = "waiting";
    if (!Object.keys(entry.changes).length) {
      return deleteEntry(entry.seq).then(function () { return remember(entry, "already"); });
    }
    return putEntry(entry);
  }

  function asNew(entry) {
    var values = {};
    Object.keys(entry.original || {}).forEach(function (name) { values[name] = entry.original[name]; });
    Object.keys(entry.values || {}).forEach(function (name) { values[name] = entry.values[name]; });
    entry.kind = "create";
    entry.recordId = newUuid();
    entry.url = "/api/v1/areas/" + entry.areaId + "/fixtures";
    entry.values = values;
    entry.state = "waiting";
    entry.message = "";
    entry.attempts = 0;
    return putEntry(entry);
  }

  function onAction(event) {
    var button = event.target.closest("[data-offline-action]");
    if (!button) {
      return;
    }
    var action = button.getAttribute("data-offline-action");
    var seq = Number(button.getAttribute("data-seq"));
    getEntry(seq).then(function (entry) {
      if (!entry) {
        return null;
      }
      if (action === "keep-mine" && entry.state === "conflict") {
        return keepMine(entry).then(function () { return "sync"; });
      }
      if (action === "keep-theirs" && entry.state === "conflict") {
        if (!window.confirm("Drop your change to " + (entry.tag || "this fixture") + " and keep what is stored?")) {
          return null;
        }
        return deleteEntry(seq).then(function () { return remember(entry, "theirs"); });
      }
      if (action === "remove") {
        if (!window.confirm("Remove " + (entry.tag || "this change") + " from this tablet? It is not on the server.")) {
          return null;
        }
        return deleteEntry(seq).then(function () { return remember(entry, "removed"); });
      }
      if (action === "as-new" && entry.state === "refused") {
        return asNew(entry).then(function () { return "sync"; });
      }
      return null;
    }).then(function (next) {
      announce();
      renderPageLists();
      refresh();
      if (next === "sync") {
        syncNow();
      }
    });
  }

  // ---------------------------------------------------------------- start

  function signInPage() {
    var main = document.getElementById("main");
    if (!main || !document.querySelector('form[action^="/signin"]')) {
      return;
    }
    allEntries().then(function (entries) {
      if (entries.length) {
        var box = element("div", "notice warn");
        box.setAttribute("role", "status");
        box.appendChild(element("p", "", plural(entries.length, "change is", "changes are") +
          " kept on this tablet, not yet on the server. Sign in to send " +
          (entries.length === 1 ? "it." : "them.")));
        main.insertBefore(box, main.firstChild);
      }
    }).catch(function () { return null; });
  }

  window.PlannerOffline = {
    check: function (raw) {
      return loadRules(RULES_URL).then(function (rules) { return convert(raw, rules).errors; });
    },
    syncNow: syncNow,
    entries: allEntries
  };

  window.addEventListener("submit", onSubmit, true);

  if (!bar) {
    signInPage();
    return;
  }

  document.addEventListener("click", onAction);
  document.getElementById("sync-now").addEventListener("click", function () {
    lastReport = "";
    syncNow().then(function (report) {
      if (report && report.stopped === "offline") {
        lastReport = "No connection yet: your changes stay on this tablet.";
      } else if (report && report.stopped === "retry") {
        lastReport = "The server did not take the changes just now; they stay on this tablet and " +
          "are tried again.";
      } else if (report && !report.sent && !report.already && !report.problems && !report.stopped) {
        lastReport = "Everything on this tablet is on the server.";
      }
      refresh();
    });
  });
  function uncheckedFindings() {
    var findings = document.getElementById("findings");
    if (findings && document.querySelector("form[data-offline-form]")) {
      notYetChecked(findings);
    }
  }
  document.addEventListener("htmx:beforeRequest", function (event) {
    if (navigator.onLine) {
      return;
    }
    event.preventDefault();
    var target = event.detail && event.detail.target;
    if (target && target.id === "findings") {
      uncheckedFindings();
    } else {
      pageMessage("No connection: this needs the server, so nothing was sent and nothing changed.", "warn");
    }
  });
  document.addEventListener("htmx:sendError", uncheckedFindings);
  window.addEventListener("online", function () { syncNow(); });
  window.addEventListener("offline", function () { setConnection("offline"); });
  window.addEventListener("pageshow", function () { refresh(); renderPageLists(); });
  if (channel) {
    channel.onmessage = function () { refresh(); renderPageLists(); };
  }
  window.setInterval(function () {
    if (!navigator.onLine || running) {
      return;
    }
    allEntries().then(function (entries) {
      var waiting = mine(entries).filter(function (entry) { return PENDING.indexOf(entry.state) >= 0; });
      if (waiting.length || connection !== "online") {
        syncNow();
      }
    }).catch(function () { return null; });
  }, RETRY_MS);

  Array.prototype.forEach.call(document.querySelectorAll("form[data-offline-form]"), setupForm);
  showFlash();
  refresh();
  renderPageLists();
  registerWorker().then(function (registration) {
    if (registration && navigator.onLine) {
      forgetAnotherUsersPages().then(warmThisPage);
    }
  });
  if (navigator.onLine) {
    syncNow();
  } else {
    setConnection("offline");
  }
})();
