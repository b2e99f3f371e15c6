// What every part of the page writes through: element lookup, numbers as the page shows them,
// bullet lists and the error area.

export const element = (id) => document.getElementById(id);

const numberFormats = new Map();
/** Formats with thousands separators and a fixed number of decimals. */
export function formatNumber(value, decimals = 0) {
  if (!numberFormats.has(decimals)) {
    numberFormats.set(decimals, new Intl.NumberFormat('en-GB', {
      minimumFractionDigits: decimals,
      maximumFractionDigits: decimals,
    }));
  }
  return numberFormats.get(decimals).format(value);
}

/** Replaces a list's items with one item per text. */
export function showList(list, texts) {
  list.replaceChildren(...texts.map((text) => {
    const item = document.createElement('li');
    item.textContent = text;
    return item;
  }));
}

export function showError(message, title = 'File not loaded') {
  element('error-message').closest('.error-area').querySelector('.error-title').textContent = title;
  element('error-message').textContent = message;
  element('error-area').hidden = false;
}

export function clearError() {
  element('error-area').hidden = true;
  element('error-message').textContent = '';
}
