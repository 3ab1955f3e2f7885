// Triage: the decide form sends the chosen rows (rule and target: a body, a label or a system)
// with a status, a note and who decides as JSON (POST .../decisions), then reloads the page so
// every badge shows the decision. Who decides is kept in a cookie for the next form. The
// Triage screen's key and import forms post JSON too (the server refuses plain form posts).

const NAME_COOKIE = "bodycensus_name";
const YEAR = 365 * 24 * 3600;

function remember(name) {
  document.cookie = `${NAME_COOKIE}=${encodeURIComponent(name)}; path=/; max-age=${YEAR}; SameSite=Strict`;
}

function say(form, text, failed) {
  const box = form.querySelector("[role=status]");
  box.textContent = text;
  box.classList.toggle("error-detail", failed);
}

async function post(form, url, body) {
  const response = await fetch(url, {
    method: "POST", headers: { "Content-Type": "application/json" }, body: JSON.stringify(body),
  });
  const answer = await response.json().catch(() => ({}));
  if (!response.ok) {
    say(form, answer.detail || `the server answered ${response.status}`, true);
    return null;
  }
  return answer;
}

function chosen(form) {
  const table = document.getElementById(form.dataset.table);
  return [...table.querySelectorAll("input.pick:checked")]
    .map((box) => ({ rule: box.dataset.rule, target: box.dataset.target }));
}

async function decide(event) {
  event.preventDefault();
  const form = event.target;
  const data = new FormData(form);
  const body = {
    scope: form.dataset.scope, status: data.get("status") || null,
    note: data.get("note") || "", by: (data.get("by") || "").trim(), items: chosen(form),
  };
  if (data.get("all_matching")) {
    body.items = [];
    body.query = form.dataset.query || "";
  } else if (!body.items.length) {
    say(form, "Choose at least one row in the table first.", true);
    return;
  }
  remember(body.by);
  const answer = await post(form, form.dataset.endpoint, body);
  if (!answer) return;
  say(form, body.status ? `Decided ${answer.decided} under “${answer.key}”.`
    : `Cleared ${answer.cleared} decisions.`, false);
  window.location.reload();
}

async function chooseKey(event) {
  event.preventDefault();
  const form = event.target;
  const answer = await post(form, form.dataset.endpoint, { key: new FormData(form).get("key") });
  if (answer) window.location.reload();
}

async function importFile(event) {
  event.preventDefault();
  const form = event.target;
  const data = new FormData(form);
  const file = data.get("file");
  if (!file || !file.size) {
    say(form, "Choose a decisions file first.", true);
    return;
  }
  const answer = await post(form, form.dataset.endpoint,
    { toml: await file.text(), replace: data.get("replace") === "1" });
  if (!answer) return;
  say(form, `Imported ${answer.decided} decisions under “${answer.key}”.`, false);
  window.location.reload();
}

for (const all of document.querySelectorAll("input.pick-all")) {
  all.addEventListener("change", () => {
    for (const box of all.closest("table").querySelectorAll("input.pick")) box.checked = all.checked;
  });
}
for (const form of document.querySelectorAll("form.decide")) form.addEventListener("submit", decide);
document.getElementById("key-form")?.addEventListener("submit", chooseKey);
document.getElementById("import-form")?.addEventListener("submit", importFile);
