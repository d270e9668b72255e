// @ts-check
import { defineConfig, passthroughImageService } from 'astro/config';
import node from '@astrojs/node';
import react from '@astrojs/react';
import tailwind from '@astrojs/tailwind';

// Hosts the server accepts in the Host header (Astro builds request URLs, and so its origin check
// for form posts, from these). Loopback always; the public host from PUBLIC_URL when deployed.
const publicHost = process.env.PUBLIC_URL ? new URL(process.env.PUBLIC_URL).hostname : null;
const allowedDomains = [{ hostname: '127.0.0.1' }, { hostname: 'localhost' }];
if (publicHost && !allowedDomains.some((d) => d.hostname === publicHost)) allowedDomains.push({ hostname: publicHost });

export default defineConfig({
  output: 'server',
  adapter: node({ mode: 'standalone' }),
  integrations: [react(), tailwind({ applyBaseStyles: false })],
  image: { service: passthroughImageService() },
  security: { checkOrigin: true, allowedDomains },
  server: { host: '127.0.0.1', port: 4321 },
  devToolbar: { enabled: false },
  vite: {
    ssr: { external: ['@node-rs/argon2', 'pg', 'pg-copy-streams'] },
    optimizeDeps: { exclude: ['@node-rs/argon2'] },
  },
});
