#!/usr/bin/env node
// npm run audit: what the built server ships, checked against the registry.
//
// 1. `npm audit --omit=dev --audit-level=high`: known advisories. Fails (exit 1) on a high or
//    critical finding. When the registry does not answer npm's advisory endpoint (some mirrors and
//    proxies answer 405), it says so and exits 2: no answer is not a clean bill.
// 2. Deprecation notices: every production package at its installed version, asked of the registry
//    (a plain GET that mirrors answer). Maintainers often deprecate a version for a security fix.
//
// Needs the registry; not part of npm test. docs/security.md keeps the last result.
import { execFileSync, spawnSync } from 'node:child_process';

const registry = execFileSync('npm', ['config', 'get', 'registry'], { encoding: 'utf8' }).trim().replace(/\/?$/, '/');

function productionPackages() {
	const run = spawnSync('npm', ['ls', '--omit=dev', '--all', '--json'], { encoding: 'utf8', maxBuffer: 64 << 20 });
	const tree = JSON.parse(run.stdout || '{}');
	const found = new Map();
	const walk = (node) => {
		for (const [name, dep] of Object.entries(node.dependencies ?? {})) {
			if (dep.version) found.set(`${name}@${dep.version}`, { name, version: dep.version });
			walk(dep);
		}
	};
	walk(tree);
	return [...found.values()].sort((a, b) => a.name.localeCompare(b.name) || a.version.localeCompare(b.version));
}

async function deprecations(packages) {
	const notices = [];
	const failures = [];
	const ask = async ({ name, version }) => {
		const url = `${registry}${name.replace('/', '%2f')}/${encodeURIComponent(version)}`;
		try {
			const res = await fetch(url, { signal: AbortSignal.timeout(20_000) });
			if (!res.ok) return failures.push(`${name}@${version}: HTTP ${res.status}`);
			const meta = await res.json();
			if (meta.deprecated) notices.push(`${name}@${version}: ${meta.deprecated}`);
		} catch (e) {
			failures.push(`${name}@${version}: ${e instanceof Error ? e.message : e}`);
		}
	};
	for (let i = 0; i < packages.length; i += 8) await Promise.all(packages.slice(i, i + 8).map(ask));
	return { notices, failures };
}

function advisories() {
	const run = spawnSync('npm', ['audit', '--omit=dev', '--json'], { encoding: 'utf8', maxBuffer: 64 << 20 });
	let report;
	try {
		report = JSON.parse(run.stdout);
	} catch {
		return { answered: false, why: (run.stderr || run.stdout || 'no output').trim().split('\n').slice(-3).join(' ') };
	}
	if (report.error || !report.metadata) {
		const why = report.message ?? (report.error ? `${report.error.code ?? ''} ${report.error.summary ?? ''}`.trim() : 'no report');
		return { answered: false, why };
	}
	const serious = Object.values(report.vulnerabilities ?? {}).filter((v) => v.severity === 'high' || v.severity === 'critical');
	return { answered: true, counts: report.metadata.vulnerabilities, serious };
}

const packages = productionPackages();
console.log(`Production packages (npm ls --omit=dev --all): ${packages.length}`);

const dep = await deprecations(packages);
console.log(`\nDeprecated on the registry: ${dep.notices.length ? '' : 'none'}`);
for (const line of dep.notices) console.log(`  ${line}`);
if (dep.failures.length) {
	console.log(`Not answered (${dep.failures.length}):`);
	for (const line of dep.failures) console.log(`  ${line}`);
}

const adv = advisories();
let exit = dep.notices.length || dep.failures.length ? 1 : 0;
if (!adv.answered) {
	console.log(`\nnpm audit --omit=dev: NO ANSWER from ${registry} (${adv.why}).`);
	console.log('Known advisories were not checked. Run this where the registry answers its advisory endpoint.');
	exit = 2;
} else {
	const c = adv.counts;
	console.log(`\nnpm audit --omit=dev: ${c.critical} critical, ${c.high} high, ${c.moderate} moderate, ${c.low} low`);
	for (const v of adv.serious) console.log(`  ${v.severity}: ${v.name} ${v.range}`);
	if (adv.serious.length) {
		console.log('Each high or critical finding is fixed by an upgrade or explained in docs/security.md.');
		exit = 1;
	}
}
process.exit(exit);
