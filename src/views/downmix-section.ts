// The report page's fold-down card: an empty shell that assets/downmix.js fills from the report,
// hidden when the analysis made no fold-down reading.

export function downmixSection(): string {
  return `
<section id="em-downmix" class="em-card" aria-labelledby="em-downmix-title" hidden>
  <h2 id="em-downmix-title" style="margin-top:0">Downmix and mono</h2>
  <p id="em-downmix-note" class="em-status"></p>
  <dl id="em-downmix-metrics" class="em-metrics"></dl>
  <div id="em-channel-loudness" hidden>
    <h3>Each channel alone</h3>
    <p class="em-status">Not summable: BS.1770 gates after summing the channels, so these readings do not add up to the programme's loudness.</p>
    <div style="overflow-x:auto">
    <table><thead><tr><th scope="col">Channel</th><th scope="col">Integrated</th></tr></thead><tbody id="em-channel-loudness-body"></tbody></table>
    </div>
  </div>
</section>`;
}
