// The report page's flag card: counts, the flag table that assets/flag-table.js fills, and the
// excerpt player with its playback-level caution.

export function flagsSection(): string {
  return `
<section id="em-flags-card" class="em-card" aria-labelledby="em-flags-title">
  <h2 id="em-flags-title" style="margin-top:0">Flags</h2>
  <p id="em-flag-counts" class="em-flag-counts"></p>
  <p class="em-status">A remark is shown for your ears only: no rule of this profile judges it, so it never changes the verdict.</p>
  <p class="em-status em-screen-only">A kind that repeats is one row with its totals: open it for each flag. Choose a flag to put the plot's cursor on it.</p>
  <table id="em-flags" class="em-flag-table em-stack">
    <thead><tr><th scope="col">Flag</th><th scope="col">Severity</th><th scope="col">Start</th><th scope="col">End</th><th scope="col">Duration</th><th scope="col">Count</th><th scope="col">Worst</th><th scope="col">Channel</th><th scope="col">Rule</th><th scope="col"><span class="em-visually-hidden">Listen</span></th></tr></thead>
    <tbody id="em-flags-body"></tbody>
  </table>
  <p id="em-flags-truncated" class="em-status"></p>
  <div class="em-listen-panel">
    <h3>Listen</h3>
    <p class="em-caution"><strong>Caution:</strong> turn your playback level down before you press play. Excerpts play at the file's own level, and a flagged passage may be clipped, far over the ceiling or suddenly loud. Protect your hearing: follow your workplace's rules on listening levels.</p>
    <audio id="em-player" controls preload="none" aria-label="Flag excerpt"></audio>
    <p id="em-player-status" class="em-status" aria-live="polite"></p>
  </div>
</section>`;
}
