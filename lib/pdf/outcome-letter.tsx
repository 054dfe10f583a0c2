import 'server-only';
import { Document, Image, Page, StyleSheet, Text, View, renderToBuffer } from '@react-pdf/renderer';
import { letterContent, type LetterFacts } from '@/lib/referrers/letter';
import { pdfText, registerFont } from './outcomes-report';

/**
 * The outcome letter to a referring dentist (issue 13), drawn with @react-pdf/renderer in the
 * worker (jobs/send-referrer-mail.ts) and for the preview route: the same font and helpers as the
 * audit report (lib/pdf/outcomes-report.tsx). One A4 page: practice, date, the referrer, the
 * treatment, the review's findings, the outcome with its caution, the next step, and the film's
 * thumbnail when the case has a film.
 */
const INK = '#1d2225';
const MUTED = '#5b6166';
const DURA = '#5a51a8';
const RULE = '#ddd4c6';

const s = StyleSheet.create({
  page: { fontFamily: 'Inter', fontSize: 10, color: INK, paddingTop: 44, paddingBottom: 56, paddingHorizontal: 48, lineHeight: 1.4 },
  header: { flexDirection: 'row', justifyContent: 'space-between', borderBottomWidth: 1, borderBottomColor: RULE, paddingBottom: 8, marginBottom: 16 },
  practice: { fontSize: 12, fontWeight: 700 },
  muted: { color: MUTED },
  h1: { fontSize: 16, fontWeight: 700, marginTop: 12, marginBottom: 8, lineHeight: 1.2 },
  h2: { fontSize: 11, fontWeight: 700, marginTop: 12, marginBottom: 4 },
  row: { flexDirection: 'row', borderBottomWidth: 1, borderBottomColor: RULE, paddingVertical: 2 },
  term: { width: 170, color: MUTED },
  value: { flex: 1 },
  outcome: { fontSize: 12, fontWeight: 700 },
  caution: { fontSize: 8.5, color: MUTED, marginTop: 6, borderLeftWidth: 2, borderLeftColor: DURA, paddingLeft: 6 },
  film: { marginTop: 10, flexDirection: 'row', alignItems: 'flex-end', gap: 8 },
  thumb: { width: 160, height: 'auto', borderWidth: 1, borderColor: RULE },
});

function Rows({ rows }: { rows: [string, string][] }) {
  return (
    <View>
      {rows.map(([t, v]) => (
        <View key={t} style={s.row} wrap={false}>
          <Text style={s.term}>{pdfText(t)}</Text>
          <Text style={s.value}>{pdfText(v)}</Text>
        </View>
      ))}
    </View>
  );
}

export async function renderOutcomeLetter(facts: LetterFacts): Promise<Buffer> {
  registerFont();
  const c = letterContent(facts);
  const doc = (
    <Document title={pdfText(c.title)} author={pdfText(facts.practiceName)} creator="Lamina" producer="Lamina">
      <Page size="A4" style={s.page}>
        <View style={s.header}>
          <View>
            <Text style={s.practice}>{pdfText(facts.practiceName)}</Text>
            {facts.practiceContact.map((line) => (
              <Text key={line} style={s.muted}>
                {pdfText(line)}
              </Text>
            ))}
          </View>
          <Text style={s.muted}>{pdfText(facts.dated)}</Text>
        </View>
        <Text>{pdfText(c.salutation)}</Text>
        <Text style={s.h1}>{pdfText(c.title)}</Text>
        <Text>{pdfText(c.opening)}</Text>
        <Text style={s.h2}>Treatment</Text>
        <Rows rows={c.treatment} />
        <Text style={s.h2}>Review findings</Text>
        <Rows rows={c.findings} />
        {facts.thumbnail && (
          <View style={s.film} wrap={false}>
            {/* eslint-disable-next-line jsx-a11y/alt-text -- a react-pdf Image, not an HTML img: a PDF has no alt attribute */}
            <Image style={s.thumb} src={{ data: Buffer.from(facts.thumbnail), format: 'jpg' }} />
            <Text style={s.muted}>Follow-up film (thumbnail)</Text>
          </View>
        )}
        <Text style={s.h2}>Outcome</Text>
        <Text style={s.outcome}>{pdfText(c.outcome)}</Text>
        <Text style={s.caution}>{pdfText(c.caution)}</Text>
        <Text style={s.h2}>Next step</Text>
        <Text>{pdfText(c.nextStep)}</Text>
        <View style={{ marginTop: 18 }}>
          {c.closing.map((line, i) => (
            <Text key={`${i}-${line}`}>{pdfText(line)}</Text>
          ))}
        </View>
      </Page>
    </Document>
  );
  return renderToBuffer(doc);
}
