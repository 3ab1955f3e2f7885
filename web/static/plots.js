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
  if (div.dataset.selection) config.modeBarButtonsToAdd = ["select2d", "lasso2d"];
  return Plotly.newPlot(div, spec.data, layout, config).then(() => {
    div.on("plotly_click", (event) => {
      const point = event.points && event.points[0];
      if (point && point.data.meta === "flagged" && typeof point.customdata === "string") {
        window.location.href = bodyUrl(point.customdata);
      }
    });
    div.on("plotly_selected", (event) => selected(div, event));
    div.dataset.drawn = "true";
  });
}

// A box or lasso drawn on the diagram: links to the Findings and Bodies lists of the region,
// which stays in their address (region=x0,x1[,y0,y1] or lasso=x y;x y;... in the diagram's
// own coordinates, region_of=<diagram>, and the label or field it shows).
function regionQuery(div, event) {
  if (!div.dataset.selection || !event) return null;
  const chosen = JSON.parse(div.dataset.selection);
  const query = new URLSearchParams({ region_of: chosen.diagram });
  if (chosen.label) query.set("label", chosen.label);
  const panels = (div.layout.meta && div.layout.meta.panels) || {};
  const round = (v) => Number(v.toPrecision(6));
  const twoD = div.layout.meta && div.layout.meta.plane;
  if (event.range) {
    const xKey = Object.keys(event.range).find((k) => k.startsWith("x"));
    const yKey = Object.keys(event.range).find((k) => k.startsWith("y"));
    const numbers = [...event.range[xKey]];
    if (twoD && yKey) numbers.push(...event.range[yKey]);
    query.set("region", numbers.map(round).join(","));
    if (panels[xKey]) query.set("field", panels[xKey]);
  } else if (event.lassoPoints) {
    const xKey = Object.keys(event.lassoPoints).find((k) => k.startsWith("x"));
    const yKey = Object.keys(event.lassoPoints).find((k) => k.startsWith("y"));
    const xs = event.lassoPoints[xKey];
    const ys = twoD && yKey ? event.lassoPoints[yKey] : xs.map(() => 0);
    const step = Math.max(1, Math.ceil(xs.length / 90)); // at most ~90 corners in a link
    const points = xs.map((x, i) => `${round(x)} ${round(ys[i])}`).filter((_, i) => i % step === 0);
    query.set("lasso", points.join(";"));
    if (panels[xKey]) query.set("field", panels[xKey]);
  } else {
    return null;
  }
  if (chosen.field && !query.has("field")) query.set("field", chosen.field);
  return query.toString();
}

function selected(div, event) {
  const query = regionQuery(div, event);
  const box = document.getElementById("selection-links");
  if (!box || !query) return;
  const chosen = JSON.parse(div.dataset.selection);
  const findings = document.createElement("a");
  findings.href = `${chosen.findings}?${query}`;
  findings.id = "region-findings";
  findings.textContent = "Open the findings inside this region";
  const bodies = document.createElement("a");
  bodies.href = `${chosen.bodies}?${query}`;
  bodies.id = "region-bodies";
  bodies.textContent = "the bodies inside it";
  box.replaceChildren("Region drawn: ", findings, " · ", bodies);
  box.hidden = false;
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
