// "Save view": stores the current address's query under a short link (POST /api/views).

const dialog = document.getElementById("save-dialog");
const form = document.getElementById("save-form");
const linkBox = document.getElementById("saved-link");
const catalogue = document.body.dataset.catalogue;

// Screens whose address alone does not say which screen it is (a saved view of the Bodies list
// with no filter would open the Findings list): their query carries screen=.
const NAMED_SCREENS = ["bodies", "groups", "search"];

function currentQuery() {
  const search = window.location.search.replace(/^\?/, "");
  const query = search || document.body.dataset.defaultQuery || "";
  const screen = document.body.dataset.screen;
  if (NAMED_SCREENS.includes(screen) && !new URLSearchParams(query).has("screen")) {
    return query ? `${query}&screen=${screen}` : `screen=${screen}`;
  }
  return query;
}

async function save(event) {
  event.preventDefault();
  const data = new FormData(form);
  const response = await fetch("/api/views", {
    method: "POST",
    headers: { "Content-Type": "application/json" },
    body: JSON.stringify({
      catalogue, query: currentQuery(), title: data.get("title"), note: data.get("note") || "",
    }),
  });
  const answer = await response.json();
  linkBox.hidden = false;
  linkBox.replaceChildren();
  if (!response.ok) {
    linkBox.textContent = answer.detail || "the view could not be saved";
    linkBox.className = "saved-link error-detail";
    return;
  }
  const url = new URL(answer.url, window.location.origin).href;
  const a = document.createElement("a");
  a.href = url;
  a.id = "saved-url";
  a.textContent = url;
  linkBox.className = "saved-link";
  linkBox.append("Saved: ", a);
}

document.getElementById("save-view").addEventListener("click", () => {
  linkBox.hidden = true;
  dialog.showModal();
});
document.getElementById("save-close").addEventListener("click", () => dialog.close());
form.addEventListener("submit", save);
