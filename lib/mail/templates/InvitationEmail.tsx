import { Button, Text } from '@react-email/components';
import { Frame, buttonStyle } from './Frame';

export function InvitationEmail(props: { url: string; practiceName: string; inviterName: string; roles: string[] }) {
  return (
    <Frame preview={`You are invited to ${props.practiceName} on Lamina`}>
      <Text>
        {props.inviterName} has invited you to join {props.practiceName} on Lamina as {props.roles.join(', ')}.
      </Text>
      <Text>Choose a password to accept. The link works once and expires in 7 days.</Text>
      <Button href={props.url} style={buttonStyle}>
        Accept the invitation
      </Button>
      <Text style={{ fontSize: 13, color: '#5b6166' }}>
        If the button does not work, paste this address into your browser: {props.url}
      </Text>
    </Frame>
  );
}
