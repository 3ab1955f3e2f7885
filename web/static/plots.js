// Draws every figure embedded in the page (JSON in a <script type="application/json">) with
// plotly.js served by this server; a click on a flagged body opens that body's page (the page's
// table of marked points links the same bodies for the keyboard).

const catalogue = document.body.dataset.catalogue;

function bodyUrl(id) {
  return `/catalogues/${encodeURIComponent(catalogue)}/bodies/${encodeURIComponent(id)}`;
}

// plotly's tool bar in the page's muted and accent colours: its default icons (grey at 30 %
// opacity) stand at 1.9:1 against the paper, under the 3:1 WCAG 1.4.11 asks of a control.
const TOOLBAR = { color: "#5f6670", activecolor: "#1d5f8a" };

function draw(div) {
  const spec = JSON.parse(document.getElementById(div.dataset.figureId).textContent);
  const layout = { ...spec.layout, modebar: { ...TOOLBAR, ...spec.layout.modebar } };
  // No "share chart" button: it would send the data to a plotly server, and this tool is offline.
  const config = { responsive: true, displaylogo: false, showSendToCloud: false };
  return Plotly.newPlot(div, spec.data, layout, config).then(() => {
    div.on("plotly_click", (event) => {
      const point = event.points && event.points[0];
      if (point && point.data.meta === "flagged" && typeof point.customdata === "string") {
        window.location.href = bodyUrl(point.customdata);
      }
    });
    div.dataset.drawn = "true";
  });
}

function scaleToggle() {
  for (const button of document.querySelectorAll("[data-scale]")) {
    button.addEventListener("click", () => {
      for (const other of document.querySelectorAll("[data-scale]")) {
        const shown = other === button;
        other.classList.toggle("primary", shown);
        other.setAttribute("aria-pressed", String(shown));
        const div = document.getElementById(`system-${other.dataset.scale}`);
        div.hidden = !shown;
        if (shown) Plotly.Plots.resize(div);
      }
    });
  }
}

// Choosing a field or label with the mouse redraws the diagram (a listener, not an inline
// handler, so the Content-Security-Policy allows no inline script at all). Arrow keys change a
// closed select one option at a time, so a choice made with the keyboard waits for "Show"
// (WCAG 3.2.2: changing a setting does not by itself open another page).
function submitOnChange() {
  for (const select of document.querySelectorAll("select[data-submit-on-change]")) {
    let byKeyboard = false;
    select.addEventListener("keydown", () => { byKeyboard = true; });
    select.addEventListener("pointerdown", () => { byKeyboard = false; });
    select.addEventListener("change", () => { if (!byKeyboard) select.form.submit(); });
  }
}

function start() {
  for (const div of document.querySelectorAll("[data-figure-id]")) draw(div);
  scaleToggle();
  submitOnChange();
}

if (window.Plotly) start();
else window.addEventListener("load", start);
