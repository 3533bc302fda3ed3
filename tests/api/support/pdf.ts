import { getDocument } from 'pdfjs-dist/legacy/build/pdf.mjs'

/** The text of every page of a PDF, pages joined by a form feed, items on a page by a space. */
export async function pdfText(bytes: Buffer | Uint8Array): Promise<string> {
  const pdf = await getDocument({ data: new Uint8Array(bytes), useSystemFonts: false }).promise
  const pages: string[] = []
  for (let i = 1; i <= pdf.numPages; i += 1) {
    const content = await (await pdf.getPage(i)).getTextContent()
    pages.push(content.items.map((item) => ('str' in item ? item.str : '')).join(' '))
  }
  await pdf.destroy()
  return pages.join('\f').replace(/\s+/g, ' ')
}
