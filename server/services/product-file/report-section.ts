/** The product file's part of the PDF report: risk outcome, period after opening, documents with SHA-256. */
import { RISK_CAUTION } from '../../../shared/compute/microbial-risk';
import { DOCUMENT_KIND_LABELS, type ProductFileView } from '../../../shared/schemas/product-file';

type Heading = (text: string) => object;
type Table = (widths: (string | number)[], head: string[] | null, body: unknown[][]) => object;

export function productFileSection(pf: ProductFileView, h: Heading, table: Table): object[] {
  const risk = pf.variants.map((v) => [
    `${v.code} · ${v.name}`,
    v.lowRisk === null ? 'No assessment yet' : `${v.riskText ?? ''}${v.outOfDate ? ' OUT OF DATE: the formula changed since.' : ''}`,
    v.paoMonths != null ? `${v.paoMonths} months (set)` : v.paoSuggested != null ? `${v.paoSuggested} months (suggested)` : '—',
    v.expected.filter((e) => !e.present).map((e) => `MISSING: ${DOCUMENT_KIND_LABELS[e.kind]}`).join('; ') || 'all present',
  ]);
  // Two rows per document: what it is, then its SHA-256 on a line of its own so the fingerprint never wraps.
  const docs = pf.documents.flatMap((d) => [
    [
      d.documentDate,
      `${DOCUMENT_KIND_LABELS[d.kind]}${d.criteria ? ` (ISO 11930: ${d.criteria === 'not_met' ? 'criteria not met' : `criteria ${d.criteria} met`})` : ''}`,
      `${d.title}, ${d.author}${d.variantCode ? `, variant ${d.variantCode}` : ', whole study'}. ${d.summary}`,
    ],
    [{ text: `SHA-256 ${d.sha256}  (${d.originalName}, ${d.bytes} bytes)`, colSpan: 3, fontSize: 7 }, {}, {}],
  ]);
  return [
    h('Microbial risk, period after opening and product file'),
    table(['auto', '*', 'auto', 'auto'], ['Variant', 'Microbial risk (ISO 29621, public summary)', 'Period after opening', 'Expected documents'], risk),
    { text: RISK_CAUTION, style: 'muted', margin: [0, 3, 0, 6] },
    pf.documents.length
      ? table(['auto', 'auto', '*'], ['Date', 'Document', 'Title, author, summary; SHA-256 fingerprint below'], docs)
      : { text: 'No documents attached.', italics: true },
  ];
}
