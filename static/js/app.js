// fleetfuel: small shared behaviour. No framework beyond htmx.
(function () {
  "use strict";
  // htmx would add its indicator CSS as an inline <style>, which the Content-Security-Policy
  // refuses; fleetfuel shows no htmx indicators. (htmx reads this when the page is ready,
  // after the deferred scripts ran.)
  // Nor may htmx evaluate strings as code (event filters, js: values): 'unsafe-eval' is off.
  if (window.htmx) {
    window.htmx.config.includeIndicatorStyles = false;
    window.htmx.config.allowEval = false;
  }
  // An export was asked for: the history page's list of recent exports refreshes itself.
  document.addEventListener("submit", function (e) {
    if (e.target && e.target.id === "export-form") {
      document.body.dispatchEvent(new CustomEvent("fleetfuel-exported", { bubbles: true }));
    }
  });
  var banner = function () { return document.getElementById("connection-banner"); };
  function offline(isOff) {
    var b = banner();
    if (b) { b.hidden = !isOff; }
    document.documentElement.classList.toggle("is-offline", isOff);
  }
  window.addEventListener("offline", function () { offline(true); });
  window.addEventListener("online", function () {
    offline(false);
    document.dispatchEvent(new CustomEvent("fleetfuel:online"));
  });
  document.addEventListener("htmx:sendError", function () { offline(true); });
  document.addEventListener("htmx:afterRequest", function (e) {
    if (e.detail && e.detail.xhr && e.detail.xhr.status) { offline(false); }
  });
  // A form that asks before it is sent: <form data-confirm="Revoke ...?">
  document.addEventListener("submit", function (e) {
    var f = e.target;
    if (f && f.dataset && f.dataset.confirm && !window.confirm(f.dataset.confirm)) {
      e.preventDefault();
    }
  });
  // Select-all boxes: <input type=checkbox data-select-all="name">; a choice that sends its
  // form at once: <select data-autosubmit>.
  document.addEventListener("change", function (e) {
    var t = e.target;
    if (t && t.dataset && t.dataset.autosubmit !== undefined && t.form) {
      t.form.submit();
      return;
    }
    if (t && t.dataset && t.dataset.selectAll) {
      document.querySelectorAll('input[type=checkbox][name="' + t.dataset.selectAll + '"]')
        .forEach(function (box) { if (!box.disabled) { box.checked = t.checked; } });
    }
  });
})();
