// Lifeguard board: ask for the board's table every few seconds (data-refresh) with the ETag we hold;
// a 304 means nothing changed, a 200 brings the new table, swapped in without reloading the page.
(function () {
  "use strict";
  var board = document.getElementById("board");
  var status = document.getElementById("board-status");
  if (!board || !window.fetch) { return; }
  var etag = board.getAttribute("data-etag") || "";
  var every = Math.max(1, Number(board.getAttribute("data-refresh")) || 60) * 1000;
  var busy = false;

  function clock() {
    return new Date().toISOString().slice(11, 19) + " UTC";
  }

  function say(text) {
    if (status) { status.textContent = text; }
  }

  function check() {
    if (busy) { return; }
    busy = true;
    var headers = etag ? { "If-None-Match": etag } : {};
    fetch(board.getAttribute("data-src"), { cache: "no-store", headers: headers, credentials: "same-origin" })
      .then(function (r) {
        if (r.status === 304) {
          say("Checked " + clock() + ": no new data. Next check in " + every / 1000 + " s.");
          return r.text().then(function () { return null; });  // read the empty body: the exchange ends cleanly
        }
        if (!r.ok) {
          say("Checked " + clock() + ": the server answered " + r.status + "; showing the last board received.");
          return null;
        }
        etag = r.headers.get("ETag") || "";
        return r.text();
      })
      .then(function (html) {
        if (html === null || html === undefined) { return; }
        board.innerHTML = html;
        board.setAttribute("data-etag", etag);
        say("Updated " + clock() + ": new levels shown. Next check in " + every / 1000 + " s.");
      })
      .catch(function () {
        say("Checked " + clock() + ": no connection; showing the last board received.");
      })
      .then(function () { busy = false; });
  }

  window.setInterval(check, every);
  document.addEventListener("visibilitychange", function () {
    if (document.visibilityState === "visible") { check(); }
  });
})();
