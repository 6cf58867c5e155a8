// The report page's declared-against-measured table: an empty shell the page script
// (assets/declared.js) fills, hidden when the file declares no loudness.

export function declaredLoudnessSection(): string {
  return `<section id="em-declared" class="em-card" aria-labelledby="em-declared-title" hidden>
  <h2 id="em-declared-title" style="margin-top:0">Declared loudness</h2>
  <p class="em-status">What the file's metadata (BWF bext version 2, iXML) says about its loudness, beside our reading.</p>
  <p id="em-declared-note" class="em-status"></p>
  <div style="overflow-x:auto">
  <table class="em-stack"><thead><tr><th scope="col">Source</th><th scope="col">Quantity</th><th scope="col" class="em-num">Declared</th><th scope="col" class="em-num">Measured</th><th scope="col" class="em-num">Measured − declared</th></tr></thead><tbody id="em-declared-body"></tbody></table>
  </div>
</section>`;
}
