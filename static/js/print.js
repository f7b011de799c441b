// fleetfuel: the printable service record's Print button (no inline handlers: the page's
// Content-Security-Policy refuses them). Without this script (the file opened from disk), the
// button stays hidden and the browser's own Print command does the same.
(function () {
  "use strict";
  document.querySelectorAll("[data-print]").forEach(function (button) {
    button.hidden = false;
    button.addEventListener("click", function () { window.print(); });
  });
})();
