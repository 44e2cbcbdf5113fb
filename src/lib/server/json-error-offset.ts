/**
 * Where a JSON text stops being JSON (RFC 8259), as a character offset. Node 20's JSON.parse names the
 * position for some errors only ("Unexpected token ',', …" carries none), and a caller deserves the
 * line and column. A full parser package would be a dependency for one message; this scanner is small,
 * runs only after JSON.parse has failed, and is tested against such texts (tests/unit/api/api-body.test.ts).
 * @returns the offset of the first character that cannot continue a JSON text (text.length when it ends
 *   too early); null when the text is valid JSON
 */
export function jsonErrorOffset(text: string): number | null {
	let i = 0;
	const ws = () => {
		while (i < text.length && ' \t\n\r'.includes(text[i])) i++;
	};
	const fail = (at: number): never => {
		throw at;
	};
	const literal = (word: string) => {
		for (const ch of word) if (text[i++] !== ch) fail(i - 1);
	};
	const string = () => {
		i++; // opening quote
		for (;;) {
			if (i >= text.length) fail(i);
			const c = text[i];
			if (c === '"') return void i++;
			if (c < ' ') fail(i);
			if (c === '\\') {
				const e = text[i + 1];
				if (e === 'u') {
					if (!/^[0-9a-fA-F]{4}$/.test(text.slice(i + 2, i + 6))) fail(i + 2);
					i += 6;
				} else if (e !== undefined && '"\\/bfnrt'.includes(e)) i += 2;
				else fail(i + 1);
			} else i++;
		}
	};
	const number = () => {
		const m = /^-?(0|[1-9]\d*)(\.\d+)?([eE][+-]?\d+)?/.exec(text.slice(i));
		if (!m) fail(i);
		i += m![0].length;
	};
	const value = (): void => {
		ws();
		const c = text[i];
		if (c === '{') {
			i++;
			ws();
			if (text[i] === '}') return void i++;
			for (;;) {
				ws();
				if (text[i] !== '"') fail(i);
				string();
				ws();
				if (text[i] !== ':') fail(i);
				i++;
				value();
				ws();
				if (text[i] === ',') i++;
				else if (text[i] === '}') return void i++;
				else fail(i);
			}
		}
		if (c === '[') {
			i++;
			ws();
			if (text[i] === ']') return void i++;
			for (;;) {
				value();
				ws();
				if (text[i] === ',') i++;
				else if (text[i] === ']') return void i++;
				else fail(i);
			}
		}
		if (c === '"') return string();
		if (c === 't') return literal('true');
		if (c === 'f') return literal('false');
		if (c === 'n') return literal('null');
		if (c === '-' || (c >= '0' && c <= '9')) return number();
		fail(i);
	};
	try {
		value();
		ws();
		return i < text.length ? i : null;
	} catch (at) {
		return Math.min(Number(at), text.length);
	}
}
