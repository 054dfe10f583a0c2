import { Body, Container, Head, Hr, Html, Preview, Section, Text } from '@react-email/components';
import type { ReactNode } from 'react';

/** Lamina's e-mail frame: plain, readable, no remote images. */
export function Frame({ preview, children, footer }: { preview: string; children: ReactNode; footer?: ReactNode }) {
  return (
    <Html lang="en">
      <Head />
      <Preview>{preview}</Preview>
      <Body style={{ backgroundColor: '#f6f3ee', fontFamily: 'Helvetica, Arial, sans-serif', color: '#1d2225' }}>
        <Container style={{ maxWidth: 560, margin: '24px auto', backgroundColor: '#ffffff', borderRadius: 10, padding: '28px 32px' }}>
          <Text style={{ fontSize: 20, fontWeight: 700, color: '#3a3470', margin: '0 0 16px' }}>Lamina</Text>
          <Section>{children}</Section>
          <Hr style={{ borderColor: '#e4ded3', margin: '24px 0 12px' }} />
          <Text style={{ fontSize: 12, color: '#5b6166' }}>
            {footer ?? 'This message was sent by Lamina, the follow-up registry of your endodontic practice.'}
          </Text>
        </Container>
      </Body>
    </Html>
  );
}

export const buttonStyle = {
  backgroundColor: '#3a3470',
  color: '#ffffff',
  borderRadius: 8,
  padding: '12px 20px',
  fontWeight: 600,
  textDecoration: 'none',
  display: 'inline-block',
} as const;
