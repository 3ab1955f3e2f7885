// Rename, re-run and delete a catalogue through its dialogs; save its mapping as a preset.
// Each calls the JSON API (PATCH / POST / DELETE under /api/catalogues/<id>) and shows a
// failure's one line in the dialog's alert.

const box = document.getElementById("manage");
const api = box ? box.dataset.api : document.body.dataset.catalogue &&
  `/api/catalogues/${encodeURIComponent(document.body.dataset.catalogue)}`;

async function call(method, url, body) {
  const response = await fetch(url, {
    method,
    headers: { "Content-Type": "application/json" },
    body: body === undefined ? undefined : JSON.stringify(body),
  });
  if (response.ok) return response.status === 204 ? {} : response.json();
  let detail = `error ${response.status}`;
  try { detail = (await response.json()).detail || detail; } catch { /* not JSON */ }
  throw new Error(detail);
}

function showError(id, err) {
  const alert = document.getElementById(id);
  alert.textContent = err.message;
  alert.hidden = false;
}

function dialogs() {
  for (const button of document.querySelectorAll("[data-open]")) {
    const dialog = document.getElementById(button.dataset.open);
    button.addEventListener("click", () => dialog.showModal());
    for (const close of dialog.querySelectorAll("[data-close]")) {
      close.addEventListener("click", () => dialog.close());
    }
  }
}

function submitted(formId, action) {
  const form = document.getElementById(formId);
  if (!form) return;
  form.addEventListener("submit", async (event) => {
    event.preventDefault();
    try { await action(new FormData(form)); } catch (err) { showError(formId.replace("-form", "-error"), err); }
  });
}

if (api) {
  dialogs();
  submitted("rename-form", async (data) => {
    const answer = await call("PATCH", api, { name: data.get("name") });
    document.getElementById("catalogue-name").textContent = answer.name;
    document.getElementById("rename-dialog").close();
    document.title = document.title.replace(/^[^·]*·/, `${answer.name} ·`);
  });
  submitted("rerun-form", async () => {
    const answer = await call("POST", `${api}/rerun`);
    window.location.href = answer.url;
  });
  submitted("delete-form", async () => {
    await call("DELETE", api);
    window.location.href = "/";
  });
  for (const button of document.querySelectorAll("[data-discard-rerun]")) {
    button.addEventListener("click", async () => {
      try {
        const answer = await call("DELETE", `${api}/rerun`);
        window.location.href = answer.url;
      } catch (err) { button.after(` ${err.message}`); }
    });
  }
  const preset = document.querySelector("[data-save-preset]");
  if (preset) {
    preset.addEventListener("click", async () => {
      const status = document.getElementById("preset-status");
      try {
        const answer = await call("POST", `${api}/preset`);
        status.textContent = `Saved: the next file with these ${answer.columns.length} columns is mapped the same way.`;
      } catch (err) { status.textContent = err.message; }
    });
  }
}
