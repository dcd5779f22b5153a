/** /static/icon.svg: the tab icon, two conductors and a pulse. */
export const ICON_SVG = `<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 32 32"><rect width="32" height="32" rx="6" fill="#111"/><path d="M3 22h8l2-12 3 12h13" fill="none" stroke="#fff" stroke-width="3" stroke-linejoin="round"/></svg>`;
