// Shared by the dashboard and report pages: the API key kept in session storage, and fetch.
const KEY_STORAGE = 'earmark.apiKey';

export function apiKey() {
  return sessionStorage.getItem(KEY_STORAGE) ?? '';
}

export function setupKeyForm(onChange) {
  const form = document.getElementById('em-key-form');
  const input = document.getElementById('em-key');
  input.value = apiKey();
  form.addEventListener('submit', (event) => {
    event.preventDefault();
    sessionStorage.setItem(KEY_STORAGE, input.value.trim());
    onChange();
  });
}

export async function api(path, options = {}) {
  const response = await fetch(path, {
    ...options,
    headers: { ...(options.headers ?? {}), authorization: `Bearer ${apiKey()}` },
  });
  if (!response.ok) {
    let detail = `${response.status}`;
    try {
      const problem = await response.json();
      detail = `${problem.code ?? response.status}: ${problem.detail ?? problem.title ?? ''}`;
    } catch {
      /* not JSON */
    }
    throw new Error(detail);
  }
  return response;
}

export function text(value, digits = 1, unit = '') {
  if (value === null || value === undefined || Number.isNaN(value)) return '–';
  return `${Number(value).toFixed(digits)}${unit ? ` ${unit}` : ''}`;
}

export function el(tag, attributes = {}, ...children) {
  const node = document.createElement(tag);
  for (const [name, value] of Object.entries(attributes)) {
    if (value === undefined || value === null || value === false) continue;
    if (name === 'class') node.className = value;
    else if (name.startsWith('on')) node.addEventListener(name.slice(2), value);
    else node.setAttribute(name, value === true ? '' : String(value));
  }
  for (const child of children.flat())
    if (child !== null && child !== undefined) node.append(child instanceof Node ? child : String(child));
  return node;
}

export function verdictBadge(verdict, large = false) {
  const label = verdict ?? 'pending';
  return el(
    'span',
    { class: `em-verdict em-verdict-${verdict ?? 'none'}${large ? ' em-verdict-large' : ''}` },
    label.toUpperCase(),
  );
}
