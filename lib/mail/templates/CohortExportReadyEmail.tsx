import { Button, Text } from '@react-email/components';
import { Frame, buttonStyle } from './Frame';

/** The researcher's notice that an anonymised export is ready (issue 14): the cohort's name and version, a signed link that expires. */
export function CohortExportReadyEmail(props: { url: string; cohortName: string; version: number; expiresInDays: number }) {
  return (
    <Frame preview={`Your anonymised export of ${props.cohortName} is ready`}>
      <Text>
        The anonymised export of the cohort “{props.cohortName}” (version {props.version}) is ready to download.
      </Text>
      <Text>The link works only while you are signed in to Lamina as a researcher of the practice, and expires in {props.expiresInDays} days. After that, open the cohort in Lamina for a new link.</Text>
      <Button href={props.url} style={buttonStyle}>
        Download the archive
      </Button>
      <Text style={{ fontSize: 13, color: '#5b6166' }}>If the button does not work, paste this address into your browser: {props.url}</Text>
    </Frame>
  );
}
