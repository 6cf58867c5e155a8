// The report page's dialogue card: an empty shell that assets/dialogue.js fills from the report,
// hidden when the analysis did not run the speech detector.

export function dialogueSection(): string {
  return `
<section id="em-dialogue" class="em-card" aria-labelledby="em-dialogue-title" hidden>
  <h2 id="em-dialogue-title" style="margin-top:0">Dialogue</h2>
  <p id="em-dialogue-note" class="em-status"></p>
  <dl id="em-dialogue-metrics" class="em-metrics"></dl>
  <p class="em-status">Loudness of the 400 ms blocks a speech detector marks as speech, after the BS.1770 gates; the plot's floor shows where it heard speech.</p>
</section>`;
}
