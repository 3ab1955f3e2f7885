// Upload a catalogue (drag-and-drop or file picker) with a byte progress bar, then follow the
// ingest's stages until the overview is ready; also drives the mapping step's form.

const $ = (id) => document.getElementById(id);

function showError(box, text) {
  box.textContent = text;
  box.hidden = false;
}

function detailOf(xhrOrResponse, body) {
  try {
    return JSON.parse(body).detail || `error ${xhrOrResponse.status}`;
  } catch {
    return `error ${xhrOrResponse.status}`;
  }
}

async function follow(apiUrl, pageUrl, onProgress) {
  // Poll the catalogue until it leaves "ingesting"; then open its page.
  for (;;) {
    const response = await fetch(apiUrl, { cache: "no-store" });
    const cat = await response.json();
    if (!response.ok) throw new Error(cat.detail || `error ${response.status}`);
    if (cat.status !== "ingesting") {
      window.location.href = pageUrl;
      return;
    }
    onProgress(cat.progress.stage, cat.progress.fraction);
    await new Promise((resolve) => setTimeout(resolve, 700));
  }
}

function upload(file) {
  const status = $("upload-status");
  const bar = $("upload-progress");
  const stage = $("upload-stage");
  const detail = $("upload-detail");
  const error = $("upload-error");
  error.hidden = true;
  status.hidden = false;
  stage.textContent = `Uploading ${file.name}…`;
  const xhr = new XMLHttpRequest();
  xhr.open("POST", "/api/catalogues");
  xhr.setRequestHeader("X-Requested-With", "XMLHttpRequest"); // the server refuses cookie uploads without it (cross-site check)
  xhr.upload.addEventListener("progress", (event) => {
    if (!event.lengthComputable) return;
    bar.value = event.loaded / event.total;
    detail.textContent = `${(event.loaded / 1048576).toFixed(1)} of ${(event.total / 1048576).toFixed(1)} MiB`;
  });
  xhr.addEventListener("load", () => {
    if (xhr.status !== 202) {
      status.hidden = true;
      showError(error, detailOf(xhr, xhr.responseText));
      return;
    }
    const answer = JSON.parse(xhr.responseText);
    if (answer.status !== "ingesting") {
      window.location.href = answer.url;
      return;
    }
    bar.value = 0;
    detail.textContent = "";
    follow(`/api/catalogues/${encodeURIComponent(answer.id)}`, answer.url, (name, fraction) => {
      stage.textContent = `Checking: ${name}`;
      bar.value = fraction;
    }).catch((err) => showError(error, err.message));
  });
  xhr.addEventListener("error", () => showError(error, "the upload was interrupted; try again"));
  const data = new FormData();
  data.append("file", file);
  xhr.send(data);
}

function uploadBox() {
  const zone = $("dropzone");
  const input = $("file-input");
  input.addEventListener("change", () => input.files[0] && upload(input.files[0]));
  zone.addEventListener("dragover", (event) => {
    event.preventDefault();
    zone.classList.add("over");
  });
  zone.addEventListener("dragleave", () => zone.classList.remove("over"));
  zone.addEventListener("drop", (event) => {
    event.preventDefault();
    zone.classList.remove("over");
    const file = event.dataTransfer.files[0];
    if (file) upload(file);
  });
}

function ingestPanel() {
  const panel = $("ingest-progress");
  follow(panel.dataset.poll, window.location.pathname, (name, fraction) => {
    $("ingest-stage").textContent = `Stage: ${name}`;
    $("ingest-bar").value = fraction;
  }).catch((err) => showError($("ingest-stage"), err.message));
}

// "name=star_name, mass=star_mass" as {name: "star_name", mass: "star_mass"}.
function pairs(text) {
  const out = {};
  for (const part of text.split(",")) {
    const [field, ...rest] = part.split("=");
    if (field.trim() && rest.length) out[field.trim()] = rest.join("=").trim();
  }
  return out;
}

function mappingForm() {
  const form = $("mapping-form");
  const idColumn = $("id-column");
  const missing = $("id-missing");
  // The id is said missing at once, and again as soon as the choice is emptied.
  idColumn.addEventListener("change", () => { missing.hidden = idColumn.value !== ""; });
  form.addEventListener("submit", async (event) => {
    event.preventDefault();
    if (!idColumn.value) {
      missing.hidden = false;
      idColumn.focus();
      return;
    }
    const choice = { map: { id: idColumn.value }, units: {}, families: {},
                     hosts: pairs($("host-columns").value), host_units: pairs($("host-units").value),
                     nulls: $("null-values").value.split(",").map((v) => v.trim()).filter((v) => v),
                     save_preset: $("save-preset").checked };
    for (const row of form.querySelectorAll("tr[data-column]")) {
      const field = row.querySelector("select[name=field]").value;
      const unit = row.querySelector("select[name=unit]").value;
      if (field) choice.map[field] = row.dataset.column;
      if (field && unit) choice.units[field] = unit;
    }
    for (const row of form.querySelectorAll("tr[data-label]")) {
      choice.families[row.dataset.label] = row.querySelector("select[name=family]").value;
    }
    const response = await fetch(form.dataset.action, {
      method: "POST",
      headers: { "Content-Type": "application/json" },
      body: JSON.stringify(choice),
    });
    if (response.ok) window.location.href = `/catalogues/${encodeURIComponent(document.body.dataset.catalogue)}`;
    else showError($("mapping-error"), detailOf(response, await response.text()));
  });
}

if ($("dropzone")) uploadBox();
if ($("ingest-progress")) ingestPanel();
if ($("mapping-form")) mappingForm();
