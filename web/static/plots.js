// Draws every figure embedded in the page (JSON in a <script type="application/json">) with
// plotly.js served by this server; a click on a flagged body opens that body's page.

const catalogue = document.body.dataset.catalogue;

function bodyUrl(id) {
  return `/catalogues/${encodeURIComponent(catalogue)}/bodies/${encodeURIComponent(id)}`;
}

function draw(div) {
  const spec = JSON.parse(document.getElementById(div.dataset.figureId).textContent);
  const config = { responsive: true, displaylogo: false };
  return Plotly.newPlot(div, spec.data, spec.layout, config).then(() => {
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
        const div = document.getElementById(`system-${other.dataset.scale}`);
        div.hidden = !shown;
        if (shown) Plotly.Plots.resize(div);
      }
    });
  }
}

// Choosing a field or label redraws the diagram (a listener, not an inline handler, so the
// Content-Security-Policy allows no inline script at all).
function submitOnChange() {
  for (const select of document.querySelectorAll("select[data-submit-on-change]")) {
    select.addEventListener("change", () => select.form.submit());
  }
}

function start() {
  for (const div of document.querySelectorAll("[data-figure-id]")) draw(div);
  scaleToggle();
  submitOnChange();
}

if (window.Plotly) start();
else window.addEventListener("load", start);
