// Logbook entry form: refresh "what this entry counts toward" while typing.
// Progressive enhancement only: without this file the "Check" button does the same.
(function () {
  "use strict";
  var form = document.getElementById("entry-form");
  var box = document.getElementById("credit");
  if (!form || !box || !window.fetch || !window.FormData) { return; }
  var url = form.getAttribute("data-credit-url");
  var timer = null;
  var latest = 0;

  function refresh() {
    var ticket = ++latest;
    var data = new FormData(form);  // includes the CSRF token
    fetch(url, { method: "POST", body: data, credentials: "same-origin", headers: { "X-Requested-With": "fetch" } })
      .then(function (response) { return response.ok ? response.text() : null; })
      .then(function (html) {
        if (html !== null && ticket === latest) { box.innerHTML = html; }
      })
      .catch(function () { /* keep the last answer; the Check button still works */ });
  }

  function soon() {
    if (timer) { clearTimeout(timer); }
    timer = setTimeout(refresh, 400);
  }

  form.addEventListener("input", soon);
  form.addEventListener("change", soon);
})();
