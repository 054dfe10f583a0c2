import { Button, Text } from '@react-email/components';
import { Frame, buttonStyle } from './Frame';

export function SignInLinkEmail({ url, host }: { url: string; host: string }) {
  return (
    <Frame preview="Your Lamina sign-in link">
      <Text>Use this link to sign in to Lamina at {host}. It works once and expires in 24 hours.</Text>
      <Button href={url} style={buttonStyle}>
        Sign in to Lamina
      </Button>
      <Text style={{ fontSize: 13, color: '#5b6166' }}>
        If the button does not work, paste this address into your browser: {url}
      </Text>
      <Text style={{ fontSize: 13, color: '#5b6166' }}>If you did not ask to sign in, ignore this message.</Text>
    </Frame>
  );
}
