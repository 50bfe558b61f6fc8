// SPDX-License-Identifier: GPL-3.0-or-later
// The Node side of tests/openapi/check.py, run with the packages pinned in
// package-lock.json:
//
//   node tool.mjs validate SPEC          the OpenAPI document against the
//                                        OpenAPI 3.x schemas
//                                        (@seriousme/openapi-schema-validator)
//   node tool.mjs json SPEC OUT          SPEC (YAML) written as JSON to OUT
//   node tool.mjs instances SPEC SAMPLES each sample {label, pointer,
//                                        instance, expect} validated with Ajv
//                                        (JSON Schema 2020-12, the dialect of
//                                        OpenAPI 3.1) against the schema at
//                                        pointer inside SPEC; expect
//                                        false: the schema must refuse it
//
// Each command prints what it found and exits 1 when something fails.
import { readFileSync, writeFileSync } from "node:fs";
import { argv, exit } from "node:process";
import { Validator } from "@seriousme/openapi-schema-validator";
import Ajv2020 from "ajv/dist/2020.js";
import { parse } from "yaml";

const SPEC_ID = "https://weft.invalid/openapi.json";

function load(path) {
	return parse(readFileSync(path, "utf-8"));
}

// Every Schema Object of an OpenAPI 3.1 document, with its JSON pointer:
// components.schemas and the "schema" of parameters, headers and media
// types.  (The OpenAPI schemas leave the inside of a Schema Object to the
// JSON Schema dialect, so these get Ajv's meta-schema check as well.)
function schemaObjects(doc) {
	const out = [];
	const esc = (k) => k.replace(/~/g, "~0").replace(/\//g, "~1");
	for (const [k, s] of Object.entries(doc.components?.schemas ?? {}))
		out.push(["/components/schemas/" + esc(k), s]);
	const walk = (node, ptr) => {
		if (node === null || typeof node !== "object")
			return;
		if (ptr.startsWith("/components/schemas"))
			return;
		for (const [k, v] of Object.entries(node)) {
			if (k === "schema" && v !== null && typeof v === "object")
				out.push([ptr + "/schema", v]);
			else
				walk(v, ptr + "/" + esc(k));
		}
	};
	walk(doc, "");
	return out;
}

async function validate(spec) {
	const v = new Validator();
	const res = await v.validate(spec);
	if (!res.valid) {
		console.log(JSON.stringify(res.errors, null, 2));
		console.log("openapi: INVALID: " + spec);
		return 1;
	}
	console.log("openapi: valid OpenAPI " + v.specificationVersion + ": " +
	    spec);
	const ajv = new Ajv2020({ strict: false });
	let bad = 0;
	const objs = schemaObjects(load(spec));
	for (const [ptr, s] of objs) {
		if (!ajv.validateSchema(s)) {
			bad++;
			console.log("schema " + ptr + ": " +
			    ajv.errorsText(ajv.errors));
		}
	}
	console.log("openapi: " + (objs.length - bad) + " of " + objs.length +
	    " Schema Objects pass the JSON Schema 2020-12 meta-schema");
	return bad === 0 ? 0 : 1;
}

function instances(spec, samplesPath) {
	const doc = load(spec);
	const samples = JSON.parse(readFileSync(samplesPath, "utf-8"));
	// The document is not a schema, but Ajv resolves a $ref to any JSON
	// pointer inside it; unknown keywords (openapi, paths, ...) are left
	// alone with strict off.
	const ajv = new Ajv2020({ strict: false, allErrors: true });
	doc.$id = SPEC_ID;
	ajv.addSchema(doc);
	let failed = 0;
	for (const s of samples) {
		const check = ajv.compile({ $ref: SPEC_ID + "#" + s.pointer });
		const want = s.expect !== false;
		if (check(s.instance) === want) {
			console.log("ok: " + s.label);
			continue;
		}
		failed++;
		console.log("FAIL: " + s.label + " (schema " + s.pointer + ")" +
		    (want ? "" : ": the schema accepts what the daemon refuses"));
		for (const e of (check.errors ?? []).slice(0, 10))
			console.log("    " + (e.instancePath || "/") + ": " +
			    e.message + " " + JSON.stringify(e.params));
	}
	console.log("instances: " + (samples.length - failed) + " as expected, " +
	    failed + " not");
	return failed === 0 ? 0 : 1;
}

async function main() {
	const [cmd, a, b] = argv.slice(2);
	if (cmd === "validate" && a)
		return validate(a);
	if (cmd === "json" && a && b) {
		writeFileSync(b, JSON.stringify(load(a)));
		return 0;
	}
	if (cmd === "instances" && a && b)
		return instances(a, b);
	console.error("usage: node tool.mjs validate SPEC | json SPEC OUT | " +
	    "instances SPEC SAMPLES");
	return 2;
}

exit(await main());
