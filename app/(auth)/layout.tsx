import { CardPage } from '@/components/shell/CardPage';

export default function AuthLayout({ children }: { children: React.ReactNode }) {
  return <CardPage footer="Lamina holds patient health data. Use it only for the care and audit of your practice’s patients.">{children}</CardPage>;
}
