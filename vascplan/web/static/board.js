// The board refreshes itself; when the server cannot be reached the board is greyed and a
// banner says it is not current (never a stale board that looks current). Forms need no script.
(function () {
  "use strict";
  var board = document.getElementById("board");
  var banner = document.getElementById("conn-lost");
  if (!board || !banner) { return; }
  var every = (parseInt(board.getAttribute("data-refresh"), 10) || 30) * 1000;
  var url = board.getAttribute("data-live");
  var lastGood = document.getElementById("board-at");
  function lost() {
    document.body.classList.add("stale");
    banner.hidden = false;
    var last = document.getElementById("conn-last");
    if (last && lastGood) { last.textContent = lastGood.textContent; }
  }
  function refresh() {
    fetch(url, { credentials: "same-origin", cache: "no-store", redirect: "manual" })
      .then(function (r) {
        // Signed out (the session timed out): reload, which shows the sign-in page.
        if (r.type === "opaqueredirect") { window.location.reload(); return null; }
        if (!r.ok || !r.headers.get("x-vascplan-board")) { throw new Error("no board"); }
        return r.text();
      })
      .then(function (html) {
        if (html === null) { return; }
        board.innerHTML = html;
        lastGood = document.getElementById("board-at");
        document.body.classList.remove("stale");
        banner.hidden = true;
      })
      .catch(lost);
  }
  window.setInterval(refresh, every);
  window.vascplanRefreshBoard = refresh;
})();
