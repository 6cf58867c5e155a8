// The report page's per-channel card: an empty shell that assets/channels.js fills from the
// report's channel summaries, hidden when the report has none.

export function channelsSection(): string {
  return `
<section id="em-channels" class="em-card" aria-labelledby="em-channels-title" hidden>
  <h2 id="em-channels-title" style="margin-top:0">Channels</h2>
  <p class="em-status">Each channel on its own. Loudness per channel is not summable: BS.1770 gates after summing the channels.</p>
  <table class="em-channel-table em-stack"><thead id="em-channels-head"></thead><tbody id="em-channels-body"></tbody></table>
  <p id="em-channels-note" class="em-status"></p>
</section>`;
}
