// How the unit sheet becomes a PDF, shared by Electron's printToPDF and the browser bench's
// page.pdf (both take Chromium's header/footer templates), so the tested PDF is the shipped one.
// The header repeats the serial (the page's title while the sheet is shown) and "page x of y" on
// every page; Chromium fills the elements classed title, pageNumber and totalPages.

const HEADER_STYLE = 'font: 8pt Arial, sans-serif; color: #444; width: 100%; margin: 0 15mm; display: flex; justify-content: space-between;';

export const SHEET_PDF = {
  displayHeaderFooter: true,
  headerTemplate: `<div style="${HEADER_STYLE}"><span>Unit <span class="title"></span></span><span>page <span class="pageNumber"></span> of <span class="totalPages"></span></span></div>`,
  // An empty footer: Chromium's default one would print the URL and date.
  footerTemplate: '<div></div>',
  marginsMm: { top: 14, bottom: 12, left: 15, right: 15 },
} as const;

export const MM_PER_INCH = 25.4;
