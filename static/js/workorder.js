// fleetfuel: the work-order page keeps what the mechanic enters, whatever the connection does.
//
// Each task form (and the job form) saves itself through htmx on every change. Until the
// server confirms a save, a copy of the form's fields stays in localStorage under the form's
// data-store-key, with the time it was typed. On load, a copy newer than the server's draft
// (data-saved-at) is put back into the form and saved again. A save that fails is retried when
// the connection returns (app.js dispatches `fleetfuel:online`) or after a server error.
(function () {
  "use strict";

  var RETRY_MS = 30000;
  var forms = function () { return document.querySelectorAll("form[data-store-key]"); };
  var inflight = 0;
  var failed = new Set();

  function note(form) {
    var status = form.querySelector(".task-status");
    return status ? status.querySelector(".saved-note") : null;
  }
  function say(form, text, cls) {
    var el = note(form);
    if (!el) {
      var status = form.querySelector(".task-status");
      if (!status) { return; }
      el = document.createElement("p");
      el.className = "saved-note";
      status.appendChild(el);
    }
    el.textContent = text;
    el.className = "saved-note" + (cls ? " " + cls : "");
    if (cls === "err") { el.setAttribute("role", "alert"); } else { el.removeAttribute("role"); }
  }
  function fields(form) {
    var out = {};
    form.querySelectorAll("input[name], select[name], textarea[name]").forEach(function (el) {
      if (el.name === "csrfmiddlewaretoken" || el.name === "token" || el.name === "snapshot") { return; }
      if (el.type === "checkbox") { out[el.name] = el.checked ? "on" : ""; }
      else { out[el.name] = el.value; }
    });
    // Fields outside the form but belonging to it (form="...") are not draft fields.
    return out;
  }
  function store(form) {
    try {
      localStorage.setItem(form.dataset.storeKey,
        JSON.stringify({ at: Date.now(), fields: fields(form) }));
    } catch (e) { /* private mode or full: the server draft still holds what was saved */ }
  }
  function stored(form) {
    try { return JSON.parse(localStorage.getItem(form.dataset.storeKey) || "null"); }
    catch (e) { return null; }
  }
  function forget(key) {
    try { localStorage.removeItem(key); } catch (e) { /* nothing to do */ }
  }
  function hhmm(ms) {
    var d = new Date(ms);
    return ("0" + d.getHours()).slice(-2) + ":" + ("0" + d.getMinutes()).slice(-2);
  }
  function retry(form) {
    if (window.htmx) { window.htmx.trigger(form, "ff-retry"); }
  }
  function retryFailed() {
    failed.forEach(function (form) { retry(form); });
  }

  // Keep a copy as the mechanic types, before any request is made.
  function onEdit(e) {
    var form = e.target && e.target.form;
    if (!form || !form.dataset.storeKey) { return; }
    form.dataset.version = String(Number(form.dataset.version || 0) + 1);
    store(form);
    if (e.type === "input") { say(form, "Not saved yet…", "pending"); }
  }
  document.addEventListener("input", onEdit, true);
  document.addEventListener("change", onEdit, true);

  document.addEventListener("htmx:beforeRequest", function (e) {
    var form = e.detail.elt;
    if (!form || !form.dataset || !form.dataset.storeKey) { return; }
    inflight += 1;
    form.dataset.sentVersion = form.dataset.version || "0";
    say(form, "Saving…", "pending");
  });

  // The form that sent the request, even when the answer swapped it out of the page (htmx
  // then fires afterRequest again on a parent still in the page).
  function sender(e) { return (e.detail.requestConfig && e.detail.requestConfig.elt) || e.detail.elt; }

  document.addEventListener("htmx:afterRequest", function (e) {
    var form = sender(e);
    if (!form || !form.dataset || !form.dataset.storeKey) { return; }
    inflight = Math.max(0, inflight - 1);
    var xhr = e.detail.xhr;
    var code = xhr ? xhr.status : 0;
    if (code >= 200 && code < 300) {
      failed.delete(form);
      // Typed again while the request was out: keep the newer copy; it saves on change.
      if ((form.dataset.version || "0") === form.dataset.sentVersion) { forget(form.dataset.storeKey); }
      form.dataset.restored = "";
    } else if (code === 409) {
      // The work order closed meanwhile: the server put the entry in its notes; the swapped
      // message says so. Keep the local copy too; no point retrying.
      failed.delete(form);
    } else if (code >= 400) {
      failed.add(form);
      say(form, "Not saved: the server answered with an error (HTTP " + code + "). " +
        "What you entered is kept on this tablet and will be sent again in 30 seconds, " +
        "or tap Save.", "err");
      window.setTimeout(function () { if (failed.has(form)) { retry(form); } }, RETRY_MS);
    }
    document.dispatchEvent(new CustomEvent("fleetfuel:saves-settled"));
  });

  document.addEventListener("htmx:sendError", function (e) {
    var form = e.detail.elt;
    if (!form || !form.dataset || !form.dataset.storeKey) { return; }
    failed.add(form);
    say(form, "Not saved: no connection. What you entered is kept on this tablet and will be " +
      "saved when the connection returns.", "err");
  });

  // "Not done" and its undo (forms with data-not-done): the answer replaces the task's card.
  // They count as saves in flight, so a close tapped meanwhile waits for them. One that does
  // not reach the server keeps the typed reason in its field and says to tap again.
  function notDoneSay(form, text) {
    var el = form.querySelector(".not-done-status");
    if (!el) { return; }
    el.textContent = text;
    el.className = "not-done-status small" + (text ? " err" : "");
    if (text) { el.setAttribute("role", "alert"); } else { el.removeAttribute("role"); }
  }
  function isNotDone(form) { return form && form.dataset && form.dataset.notDone; }
  document.addEventListener("htmx:beforeRequest", function (e) {
    var form = e.detail.elt;
    if (!isNotDone(form)) { return; }
    inflight += 1;
    form.dataset.sending = "1";
    notDoneSay(form, "");
    var button = form.querySelector("button[type=submit]");
    if (button) { button.disabled = true; }
  });
  document.addEventListener("htmx:afterRequest", function (e) {
    var form = sender(e);
    if (!isNotDone(form) || form.dataset.sending !== "1") { return; }
    form.dataset.sending = "";
    inflight = Math.max(0, inflight - 1);
    var button = form.querySelector("button[type=submit]");
    if (button) { button.disabled = false; }
    var code = e.detail.xhr ? e.detail.xhr.status : 0;
    if (code >= 500) {
      notDoneSay(form, "Not sent: the server answered with an error (HTTP " + code + "). " +
        "Nothing was changed. Tap the button again.");
    } else if (!code) {
      notDoneSay(form, "Not sent: no connection. Nothing was changed; what you typed is still " +
        "here. Tap the button again when the connection is back.");
    }
    document.dispatchEvent(new CustomEvent("fleetfuel:saves-settled"));
  });
  // A task marked not done loses its draft form: stop retrying a form no longer on the page.
  document.addEventListener("htmx:afterSwap", function () {
    failed.forEach(function (form) { if (!document.body.contains(form)) { failed.delete(form); } });
  });

  document.addEventListener("fleetfuel:online", retryFailed);
  window.addEventListener("online", retryFailed);

  // On load: put back a local copy newer than the server's draft, and save it.
  function restore() {
    forms().forEach(function (form) {
      var copy = stored(form);
      if (!copy || !copy.fields) { return; }
      var server = Date.parse(form.dataset.savedAt || "") || 0;
      if (copy.at <= server) { forget(form.dataset.storeKey); return; }
      var changed = false;
      Object.keys(copy.fields).forEach(function (name) {
        var el = form.elements.namedItem(name);
        if (!el || el instanceof RadioNodeList) { return; }
        if (el.type === "checkbox") {
          var on = copy.fields[name] === "on";
          if (el.checked !== on) { el.checked = on; changed = true; }
        } else if (el.value !== copy.fields[name]) {
          el.value = copy.fields[name];
          changed = true;
        }
      });
      if (!changed) { forget(form.dataset.storeKey); return; }
      form.dataset.restored = "1";
      say(form, "Restored what you entered on this tablet at " + hhmm(copy.at) +
        " (it had not reached the server). Saving now…", "pending");
      retry(form);
    });
  }

  // A closed work order's page clears the copies of its forms.
  function clearClosed() {
    var page = document.querySelector("[data-forget-keys]");
    if (!page) { return; }
    page.dataset.forgetKeys.split(/\s+/).forEach(function (key) { if (key) { forget(key); } });
  }

  // Close: wait for saves in flight; refuse plainly while offline; carry a snapshot of the
  // tablet's entries (kept in the notes if another tablet closed the work order first).
  function onSubmit(e) {
    var form = e.target;
    if (!form || form.id !== "close-form") { return; }
    var submitter = e.submitter;
    var isClose = submitter && submitter.getAttribute("form") === "close-form";
    if (!isClose) { return; }
    var wait = document.querySelector(".close-wait");
    if (!navigator.onLine) {
      e.preventDefault();
      if (wait) {
        wait.hidden = false;
        wait.textContent = "No connection: the work order cannot close right now. Everything " +
          "you entered is kept on this tablet. Tap Close again when the connection is back.";
      }
      return;
    }
    var snap = {};
    forms().forEach(function (f) {
      if (f.dataset.task) { snap[f.dataset.label || f.dataset.task] = fields(f); }
    });
    form.elements.namedItem("snapshot").value = JSON.stringify(snap);
    if (inflight > 0) {
      e.preventDefault();
      if (wait) { wait.hidden = false; wait.textContent = "Waiting for the last entries to save…"; }
      var started = Date.now();
      var again = function () {
        if (inflight > 0 && Date.now() - started < 15000) { window.setTimeout(again, 150); return; }
        if (wait) { wait.hidden = true; }
        form.requestSubmit(submitter);
      };
      window.setTimeout(again, 150);
    }
  }
  document.addEventListener("submit", onSubmit);

  // Deferred scripts run while readyState is "interactive", before htmx (loaded earlier) has
  // processed the page on DOMContentLoaded: start after it, so restored forms can save.
  function start() { clearClosed(); restore(); }
  if (document.readyState === "complete") { start(); }
  else { document.addEventListener("DOMContentLoaded", start); }
})();
