// ebb's only script: live progress on a job's page. It polls the job's
// status and updates the progress bar and note; when the job finishes it
// reloads the page, which then shows the result. Pages work without it.
"use strict";
(function () {
  const box = document.getElementById("job");
  if (!box || box.hasAttribute("data-finished")) return;
  const url = box.getAttribute("data-status-url");
  const bar = document.getElementById("job-progress");
  const note = document.getElementById("job-message");
  const status = document.getElementById("job-status");
  async function poll() {
    try {
      const res = await fetch(url, { headers: { Accept: "application/json" }, credentials: "same-origin" });
      if (!res.ok) throw new Error(res.status);
      const s = await res.json();
      bar.value = s.progress;
      bar.textContent = Math.round(s.progress) + "%";
      note.textContent = s.message;
      status.textContent = s.status;
      status.className = "status status-" + s.status;
      if (s.finished) {
        window.location.reload();
        return;
      }
    } catch (e) {
      note.textContent = "Lost contact with the server; retrying…";
    }
    setTimeout(poll, 500);
  }
  setTimeout(poll, 300);
})();

// The churn-window page: typing an X shows that X's sensitivity row at
// once, read from the table already on the page (no request).
(function () {
  const live = document.getElementById("live-lookup");
  if (!live) return;
  const body = live.querySelector("tbody");
  function show(e) {
    const n = parseInt(e.target.value, 10);
    const row = document.getElementById("x-" + n);
    if (!row) {
      live.hidden = true;
      return;
    }
    const copy = row.cloneNode(true);
    copy.removeAttribute("id");
    body.replaceChildren(copy);
    live.hidden = false;
  }
  for (const id of ["save-days", "x"]) {
    const input = document.getElementById(id);
    if (input) {
      input.addEventListener("input", show);
      if (input.value) show({ target: input });
    }
  }
})();
