// Readings without a connection. A reading saved while the network is gone is kept in this browser
// (IndexedDB, keyed by its client UUID), shown as waiting to send, and sent through the JSON API when
// the connection returns. The server stores one record per client UUID, so a resend never doubles.
// A reading the server refuses stays here, with its reasons, until the crew member corrects or
// discards it: nothing is dropped on its own.
(function () {
  "use strict";
  var script = document.getElementById("fc-offline-script");
  if (!script) return;
  var config = script.dataset;
  var DB_NAME = "fleetcare-offline";
  var STORE = "outbox";
  var RETRY_MS = 20000;
  var PRECACHE_EVERY_MS = 10 * 60 * 1000;
  var sending = false;
  // How the battery was picked (a scanned label, a search, ...): the entry screen's address says `via=`.
  var TABLET_CHOICES = ["scan", "search", "today", "page"];

  // ---- Service worker: keep the entry screens on the tablet. -------------------------------------
  if ("serviceWorker" in navigator && config.sw) {
    navigator.serviceWorker.register(config.sw, {scope: "/"}).then(function () {
      return navigator.serviceWorker.ready;
    }).then(function (registration) {
      if (!navigator.onLine) return;
      var last = JSON.parse(localStorage.getItem("fc-precached") || "{}");
      if (!config.user) {
        // Signed out (and not the offline page standing in for another): forget the last user's pages.
        if (last.user && !document.getElementById("offline-batteries")) {
          registration.active.postMessage({type: "forget"});
          localStorage.removeItem("fc-precached");
        }
        return;
      }
      if (last.user === config.user && Date.now() - (last.at || 0) < PRECACHE_EVERY_MS) return;
      registration.active.postMessage({type: "precache", source: config.precache});
    }).catch(function () {});
    navigator.serviceWorker.addEventListener("message", function (event) {
      if (event.data && event.data.type === "precached") {
        localStorage.setItem("fc-precached", JSON.stringify({user: config.user, at: Date.now()}));
        document.documentElement.dataset.precached = String(event.data.pages);
      }
    });
  }

  // ---- IndexedDB, promise style. -----------------------------------------------------------------
  function openDb() {
    return new Promise(function (resolve, reject) {
      if (!window.indexedDB) { reject(new Error("no IndexedDB")); return; }
      var request = indexedDB.open(DB_NAME, 1);
      request.onupgradeneeded = function () { request.result.createObjectStore(STORE, {keyPath: "client_uuid"}); };
      request.onsuccess = function () { resolve(request.result); };
      request.onerror = function () { reject(request.error); };
    });
  }

  function withStore(mode, work) {
    return openDb().then(function (db) {
      return new Promise(function (resolve, reject) {
        var tx = db.transaction(STORE, mode);
        var result = work(tx.objectStore(STORE));
        tx.oncomplete = function () { db.close(); resolve(result && "result" in result ? result.result : result); };
        tx.onerror = function () { db.close(); reject(tx.error); };
      });
    });
  }

  function allItems() {
    return withStore("readonly", function (store) { return store.getAll(); }).then(function (items) {
      return (items || []).sort(function (a, b) { return a.saved_at < b.saved_at ? -1 : 1; });
    });
  }
  function getItem(uuid) { return withStore("readonly", function (store) { return store.get(uuid); }); }
  function putItem(item) { return withStore("readwrite", function (store) { store.put(item); }); }
  function deleteItem(uuid) { return withStore("readwrite", function (store) { store.delete(uuid); }); }

  // ---- Small helpers. ----------------------------------------------------------------------------
  function newUuid() {
    if (window.crypto && crypto.randomUUID) return crypto.randomUUID();
    var b = crypto.getRandomValues(new Uint8Array(16));
    b[6] = (b[6] & 15) | 64; b[8] = (b[8] & 63) | 128;
    var h = Array.prototype.map.call(b, function (x) { return (x + 256).toString(16).slice(1); }).join("");
    return h.slice(0, 8) + "-" + h.slice(8, 12) + "-" + h.slice(12, 16) + "-" + h.slice(16, 20) + "-" + h.slice(20);
  }

  function cookie(name) {
    var match = document.cookie.match(new RegExp("(?:^|; )" + name + "=([^;]*)"));
    return match ? decodeURIComponent(match[1]) : "";
  }

  function blank(value) { return value === null || String(value).trim() === "" ? null : String(value).trim(); }

  function localNow() {
    var d = new Date();
    d.setMinutes(d.getMinutes() - d.getTimezoneOffset());
    return d.toISOString().slice(0, 16);
  }

  function el(tag, attrs, text) {
    var node = document.createElement(tag);
    Object.keys(attrs || {}).forEach(function (key) { node.setAttribute(key, attrs[key]); });
    if (text !== undefined) node.textContent = text;
    return node;
  }

  function fieldLabel(name) {
    var m = /^(sg|low|volts)_(\d+)$/.exec(name);
    if (m) return (m[1] === "volts" ? "Block " : "Cell ") + m[2];
    var labels = {temp: "Temperature", taken_at: "Taken at", situation: "Situation", hours_since_charge: "Hours since charge",
                  notes: "Notes", cells: "Cells", client_uuid: "Reading", __all__: ""};
    return Object.prototype.hasOwnProperty.call(labels, name) ? labels[name] : name;
  }

  function say(text, tone) {
    var box = document.getElementById("fc-offline-status");
    if (!box) return;
    box.className = "alert alert-" + (tone || "info");
    box.textContent = text;
    box.hidden = false;
  }

  // ---- The indicator in the menu bar. ------------------------------------------------------------
  function refreshIndicator() {
    var badge = document.getElementById("fc-outbox");
    if (!badge) return Promise.resolve([]);
    return allItems().then(function (items) {
      var refused = items.filter(function (i) { return i.state === "rejected"; }).length;
      var waiting = items.length - refused;
      var parts = [];
      if (!navigator.onLine) parts.push("No connection");
      if (waiting) parts.push(waiting + " waiting to send");
      if (refused) parts.push(refused + " refused: needs you");
      badge.textContent = parts.join(" · ");
      badge.hidden = parts.length === 0;
      badge.dataset.waiting = String(waiting);
      badge.dataset.refused = String(refused);
      badge.classList.toggle("btn-danger", refused > 0);
      badge.classList.toggle("btn-warning", refused === 0);
      renderOutbox(items);
      return items;
    }).catch(function () { return []; });
  }

  // ---- Sending what waits. -----------------------------------------------------------------------
  function sendForm(item, token) {
    // An equalizing record: the page's own form, posted as the page would have posted it.
    var body = new URLSearchParams();
    item.fields.forEach(function (pair) { body.append(pair[0], pair[1]); });
    body.append("csrfmiddlewaretoken", token);
    return fetch(item.api, {method: "POST", credentials: "same-origin", body: body}).then(function (response) {
      if (response.ok && response.redirected && !isSignIn(response.url)) return {status: 201, answer: {}};
      if (response.redirected && isSignIn(response.url)) return {status: 401, answer: {}};
      if (response.status >= 500) return {status: response.status, answer: {}};
      return {status: 422, answer: {detail: "FleetCare did not take it: open it to see why, then save it again."}};
    });
  }

  function isSignIn(url) { return new URL(url, location.href).pathname.indexOf("/accounts/login") === 0; }

  function sendOne(item) {
    var token = cookie("csrftoken") || item.csrf || "";
    var sent = item.kind === "form" ? sendForm(item, token) : fetch(item.api, {
      method: "POST", credentials: "same-origin",
      headers: {"Content-Type": "application/json", "Accept": "application/json", "X-CSRFToken": token},
      body: JSON.stringify(item.body)
    }).then(function (response) {
      return response.json().catch(function () { return {}; }).then(function (answer) {
        return {status: response.status, answer: answer};
      });
    });
    return sent.then(function (result) {
      var response = {status: result.status};
      var answer = result.answer;
      return Promise.resolve().then(function () {
        if (response.status === 201 || response.status === 200) {
          return deleteItem(item.client_uuid).then(function () {
            say("Sent: the " + item.serial + " " + whatOf(item) + " of " + whenOf(item) + " is stored.", "success");
          });
        }
        if (response.status === 401) {
          item.detail = "Sign in again to send it: it stays here until then.";
          return putItem(item);
        }
        if (response.status >= 400 && response.status < 500) {
          item.state = "rejected";
          item.status = response.status;
          item.detail = answer.detail || ("Refused (" + response.status + ").");
          item.errors = answer.errors || {};
          return putItem(item).then(function () {
            say("FleetCare refused the " + item.serial + " " + whatOf(item) + ": " + item.detail + " Open “refused: needs you” to correct it.", "danger");
          });
        }
        item.detail = "The server could not take it just now (" + response.status + "); it will try again.";
        return putItem(item);
      });
    });
  }

  function mine(item) { return !item.user || item.user === config.user; }

  function signedInAs() {
    // Who the session belongs to now (another tab may have signed someone else in since this page loaded).
    return fetch(config.me, {credentials: "same-origin", headers: {Accept: "application/json"}})
      .then(function (response) { return response.ok ? response.json() : {}; })
      .then(function (me) { return me.username || ""; });
  }

  function sendWaiting() {
    if (sending || !navigator.onLine || !config.user) return Promise.resolve();
    sending = true;
    var user = "";
    return signedInAs().then(function (username) {
      user = username;
      return allItems();
    }).then(function (items) {
      // Only the crew member who took a reading sends it: it is stored under their name.
      var waiting = items.filter(function (i) { return i.state !== "rejected" && user && (!i.user || i.user === user); });
      return waiting.reduce(function (chain, item) {
        return chain.then(function () { return sendOne(item); });
      }, Promise.resolve());
    }).catch(function () {
      // Network gone again: everything stays waiting.
    }).then(function () {
      sending = false;
      return refreshIndicator();
    });
  }

  window.addEventListener("online", function () { refreshIndicator(); sendWaiting(); });
  window.addEventListener("offline", refreshIndicator);
  setInterval(function () {
    var badge = document.getElementById("fc-outbox");
    if (badge && Number(badge.dataset.waiting || 0) > 0) sendWaiting();
  }, RETRY_MS);

  // ---- The entry forms: readings, water, equalizing. -----------------------------------------------
  var WHAT = {inspection: "reading", top_up: "water top-up", form: "equalizing record"};

  function collectInspection(form, data) {
    var body = {
      client_uuid: data.get("client_uuid"), situation: data.get("situation"), scope: data.get("scope") || "all",
      taken_at: data.get("taken_at") || "", temp: blank(data.get("temp")),
      hydrometer_compensated: data.get("hydrometer_compensated") !== null,
      hours_since_charge: blank(data.get("hours_since_charge")), notes: data.get("notes") || "", cells: []
    };
    if (TABLET_CHOICES.indexOf(data.get("chosen_via")) >= 0) body.chosen_via = data.get("chosen_via");
    form.querySelectorAll("input[data-position]").forEach(function (input) {
      var position = Number(input.dataset.position);
      if (input.name.indexOf("volts_") === 0) {
        body.cells.push({position: position, volts: blank(input.value)});
      } else {
        var low = form.elements["low_" + position];
        var confirm = form.elements["confirm_" + position];
        body.cells.push({position: position, sg: blank(input.value), low: !!(low && low.checked),
                         confirmed: !!(confirm && confirm.checked)});
      }
    });
    return body;
  }

  function collectTopUp(data) {
    return {
      client_uuid: data.get("client_uuid"), done_at: data.get("done_at") || "", volume: blank(data.get("volume")) || "",
      per_cell: data.get("per_cell") !== null, before_charge: data.get("before_charge") !== null,
      water_type: data.get("water_type") || "distilled", notes: data.get("notes") || ""
    };
  }

  function collect(form) {
    var data = new FormData(form);
    var kind = form.dataset.offlineKind || "inspection";
    var fields = [];
    data.forEach(function (value, name) { if (name !== "csrfmiddlewaretoken") fields.push([name, value]); });
    var body = kind === "inspection" ? collectInspection(form, data) : kind === "top_up" ? collectTopUp(data) : null;
    var when = data.get("taken_at") || data.get("done_at") || data.get("started_at") || data.get("ended_at") || "";
    return {
      client_uuid: data.get("client_uuid") || newUuid(), kind: kind, api: form.dataset.offlineApi,
      serial: form.dataset.serial, what: form.dataset.offlineWhat || WHAT[kind], when: String(when),
      page: location.pathname + location.search, body: body, fields: fields, state: "waiting", detail: "",
      errors: {}, csrf: data.get("csrfmiddlewaretoken") || "", saved_at: new Date().toISOString(), user: config.user || ""
    };
  }

  function whenOf(item) { return String(item.when || (item.body && item.body.taken_at) || "").replace("T", " "); }
  function whatOf(item) { return item.what || "reading"; }

  function clearForNext(form) {
    form.querySelectorAll("input[data-position]").forEach(function (input) {
      input.value = "";
      var cell = input.closest(".tray-cell");
      if (cell) cell.classList.remove("is-filled", "has-error", "is-suspect");
    });
    form.querySelectorAll(".confirm-toggle").forEach(function (toggle) { toggle.hidden = true; });
    form.querySelectorAll(".fc-cell-messages").forEach(function (node) { node.textContent = ""; });
    form.querySelectorAll("input[name^=low_], input[name^=confirm_]").forEach(function (box) { box.checked = false; });
    ["notes", "volume", "sg", "volts"].forEach(function (name) { if (form.elements[name]) form.elements[name].value = ""; });
    form.querySelectorAll("input[type=datetime-local]").forEach(function (input) { input.value = localNow(); });
    if (form.elements.client_uuid) form.elements.client_uuid.value = newUuid();
    clearErrors(form);
    if (location.hash) history.replaceState(null, "", location.pathname + location.search);
  }

  function keepForLater(form, item) {
    return putItem(item).then(function () {
      say("No connection: the " + item.serial + " " + whatOf(item) + " is kept on this tablet and waiting to send. " +
          "It will be sent by itself when the connection returns.", "warning");
      clearForNext(form);
      window.scrollTo(0, 0);
      return refreshIndicator();
    }).catch(function () {
      say("No connection, and this browser cannot keep it. Do not close this page: save again when the connection returns.", "danger");
    });
  }

  function clearErrors(form) {
    form.querySelectorAll(".fc-kept-error").forEach(function (node) { node.remove(); });
    form.querySelectorAll(".is-invalid").forEach(function (node) { node.classList.remove("is-invalid"); });
  }

  function showErrors(form, item) {
    clearErrors(form);
    var general = [];
    Object.keys(item.errors || {}).forEach(function (name) {
      var input = form.elements[name];
      var messages = item.errors[name];
      if (input && input.classList) {
        input.classList.add("is-invalid");
        var cell = input.closest(".tray-cell");
        if (cell) cell.classList.add("has-error");
        var holder = cell || input.parentNode;
        messages.forEach(function (m) { holder.appendChild(el("div", {"class": "invalid-feedback d-block fc-kept-error"}, m)); });
      } else {
        messages.forEach(function (m) {
          if (m !== item.detail) general.push((fieldLabel(name) ? fieldLabel(name) + ": " : "") + m);
        });
      }
    });
    var box = el("div", {"class": "alert alert-danger fc-kept-error", role: "alert", id: "fc-refused"});
    box.appendChild(el("strong", {}, "FleetCare refused this when it was sent: " + (item.detail || "") + " "));
    general.forEach(function (m) { box.appendChild(el("div", {}, m)); });
    box.appendChild(el("div", {}, "Correct it and save again, or discard it."));
    var discard = el("button", {type: "button", "class": "btn btn-outline-danger mt-2"}, "Discard this reading");
    discard.addEventListener("click", function () {
      if (!confirm("Discard the " + item.serial + " " + whatOf(item) + "? It was never stored and cannot be brought back.")) return;
      deleteItem(item.client_uuid).then(function () { clearForNext(form); refreshIndicator(); });
    });
    box.appendChild(discard);
    form.insertBefore(box, form.firstChild);
  }

  function resume(form, uuid) {
    return getItem(uuid).then(function (item) {
      if (!item) return;
      form.querySelectorAll("input[type=checkbox]").forEach(function (box) { box.checked = false; });
      item.fields.forEach(function (pair) {
        var input = form.elements[pair[0]];
        if (!input || pair[0] === "csrfmiddlewaretoken") return;
        if (input.type === "checkbox") input.checked = true;
        else input.value = pair[1];
        var cell = input.closest && input.closest(".tray-cell");
        if (cell && input.dataset.position) cell.classList.toggle("is-filled", String(pair[1]).trim() !== "");
      });
      if (item.state === "rejected") showErrors(form, item);
    });
  }

  function hookForm(form) {
    var via = new URLSearchParams(location.search).get("via");
    if (form.elements.chosen_via && TABLET_CHOICES.indexOf(via) >= 0) form.elements.chosen_via.value = via;
    var hasErrors = form.querySelector(".is-invalid, .has-error, .alert-danger");
    var match = /^#resume=([0-9a-f-]{36})$/.exec(location.hash);
    if (match) resume(form, match[1]);
    else if (!hasErrors && form.elements.client_uuid) form.elements.client_uuid.value = newUuid();  // a kept copy must not reuse one

    form.addEventListener("submit", function (event) {
      event.preventDefault();
      var item = collect(form);
      if (!navigator.onLine) { keepForLater(form, item); return; }
      // A kept copy of the page may carry an old form token: the cookie holds the current one.
      if (form.elements.csrfmiddlewaretoken && cookie("csrftoken")) form.elements.csrfmiddlewaretoken.value = cookie("csrftoken");
      fetch(form.action || location.href, {method: "POST", body: new FormData(form), credentials: "same-origin"})
        .then(function (response) {
          if (response.redirected && response.ok) {
            return deleteItem(item.client_uuid).catch(function () {}).then(function () { location.assign(response.url); });
          }
          if (response.status >= 500) return keepForLater(form, item);  // server or proxy down: as good as offline
          // Not stored (the form has errors, or something else): let the server show the page as usual.
          HTMLFormElement.prototype.submit.call(form);
        })
        .catch(function () { keepForLater(form, item); });
    });
  }

  // ---- The outbox page and the offline page. -----------------------------------------------------
  function renderOutbox(items) {
    var list = document.getElementById("outbox-list");
    if (!list) return;
    list.textContent = "";
    document.getElementById("outbox-empty").hidden = items.length > 0;
    items.forEach(function (item) {
      var row = el("div", {"class": "list-group-item py-3", "data-uuid": item.client_uuid, "data-state": item.state});
      row.appendChild(el("div", {"class": "fw-semibold"}, item.serial + " · " + whatOf(item) + " of " + whenOf(item)));
      var refused = item.state === "rejected";
      var state = refused ? "Refused: " + item.detail : "Waiting to send." + (item.detail ? " " + item.detail : "");
      if (!mine(item)) state = "Taken by " + item.user + ": it is sent when " + item.user + " signs in on this tablet.";
      row.appendChild(el("div", {}, state));
      Object.keys(item.errors || {}).forEach(function (name) {
        item.errors[name].forEach(function (m) {
          if (m === item.detail) return;
          row.appendChild(el("div", {"class": "text-danger"}, (fieldLabel(name) ? fieldLabel(name) + ": " : "") + m));
        });
      });
      var actions = el("div", {"class": "d-flex flex-wrap gap-2 mt-2"});
      if (refused) {
        actions.appendChild(el("a", {"class": "btn btn-primary", href: item.page + "#resume=" + item.client_uuid}, "Correct it"));
        var retry = el("button", {type: "button", "class": "btn btn-outline-primary"}, "Send again as it is");
        retry.addEventListener("click", function () {
          item.state = "waiting"; item.errors = {}; item.detail = "";
          putItem(item).then(sendWaiting);
        });
        actions.appendChild(retry);
        var discard = el("button", {type: "button", "class": "btn btn-outline-danger"}, "Discard");
        discard.addEventListener("click", function () {
          if (!confirm("Discard the " + item.serial + " " + whatOf(item) + "? It was never stored and cannot be brought back.")) return;
          deleteItem(item.client_uuid).then(refreshIndicator);
        });
        actions.appendChild(discard);
      }
      row.appendChild(actions);
      list.appendChild(row);
    });
  }

  function offlineBatteries() {
    var box = document.getElementById("offline-batteries");
    if (!box) return;
    var list = document.getElementById("offline-battery-list");
    var filter = document.getElementById("offline-filter");
    filter.value = new URLSearchParams(location.search).get("q") || "";
    fetch(box.dataset.source, {credentials: "same-origin", headers: {Accept: "application/json"}})
      .then(function (response) { return response.ok ? response.json() : []; })
      .catch(function () { return []; })
      .then(function (batteries) {
        function draw() {
          var q = filter.value.trim().toLowerCase();
          list.textContent = "";
          batteries.filter(function (b) {
            return !q || b.serial.toLowerCase().indexOf(q) >= 0 || (b.vehicle || "").toLowerCase().indexOf(q) >= 0;
          }).forEach(function (b) {
            list.appendChild(el("a", {"class": "list-group-item list-group-item-action py-3", href: b.inspect_url + "?via=search"},
                                b.serial + (b.vehicle ? " · in " + b.vehicle : "") + " · " + b.site));
          });
        }
        document.getElementById("offline-battery-empty").hidden = batteries.length > 0;
        filter.addEventListener("input", draw);
        draw();
      });
  }

  document.addEventListener("DOMContentLoaded", function () {
    document.querySelectorAll("form[data-offline-api]").forEach(hookForm);
    var sendNow = document.getElementById("outbox-send-now");
    if (sendNow) sendNow.addEventListener("click", sendWaiting);
    offlineBatteries();
    refreshIndicator().then(function () { sendWaiting(); });
  });
})();
