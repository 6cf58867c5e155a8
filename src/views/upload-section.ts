// The dashboard's upload card: files (chosen or dropped), the profile they are checked against,
// an optional externalId, and one row per file that assets/dashboard-upload.js fills with its
// progress and outcome.

export function uploadSection(): string {
  return `<section class="em-card" aria-labelledby="em-upload-title">
  <h2 id="em-upload-title" style="margin-top:0">Check files</h2>
  <form id="em-upload-form" class="em-upload-form" novalidate>
    <div id="em-drop" class="em-drop">
      <label for="em-upload-files">Audio files <small>(choose one or many, or drop them on this box)</small></label>
      <input id="em-upload-files" type="file" multiple>
    </div>
    <div class="em-filters">
      <label for="em-upload-profile">Profile
        <select id="em-upload-profile"><option value="">enter an API key first</option></select></label>
      <label for="em-upload-external"><span>External ID <small>(optional; given to every file of this batch)</small></span>
        <input id="em-upload-external" maxlength="200" autocomplete="off"></label>
      <button type="submit" id="em-upload-start">Upload and check</button>
    </div>
  </form>
  <p id="em-upload-status" class="em-status" role="status"></p>
  <ul id="em-uploads" class="em-uploads" aria-label="Uploads"></ul>
</section>`;
}
