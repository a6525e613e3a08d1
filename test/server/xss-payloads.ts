/**
 * @module test/server/xss-payloads
 * Script and HTML payloads modelled on the OWASP "XSS Filter Evasion Cheat Sheet"
 * (https://cheatsheetseries.owasp.org/cheatsheets/XSS_Filter_Evasion_Cheat_Sheet.html), written
 * from memory of its sections (marked as such) with host names replaced by the reserved `.invalid`
 * domain. Each must appear on the dashboard as inert text.
 */
export const XSS_PAYLOADS: readonly string[] = [
  // basic and case-varied script tags
  '<SCRIPT SRC=http://xss.invalid/xss.js></SCRIPT>',
  '<script>alert("XSS")</script>',
  '<<SCRIPT>alert("XSS");//\\<</SCRIPT>',
  '<SCRIPT/XSS SRC="http://xss.invalid/xss.js"></SCRIPT>',
  '<SCRIPT SRC=http://xss.invalid/xss.js?< B >',
  // image and event-handler vectors
  '<IMG SRC="javascript:alert(\'XSS\');">',
  '<IMG SRC=JaVaScRiPt:alert(\'XSS\')>',
  '<IMG SRC=`javascript:alert("RSnake says, \'XSS\'")`>',
  '<IMG """><SCRIPT>alert("XSS")</SCRIPT>"\\>',
  '<IMG SRC=/ onerror="alert(String.fromCharCode(88,83,83))"></img>',
  '<img src=x onerror="&#0000106&#0000097&#0000118&#0000097&#0000115&#0000099&#0000114&#0000105&#0000112&#0000116&#0000058&#0000097&#0000108&#0000101&#0000114&#0000116&#0000040&#0000039&#0000088&#0000083&#0000083&#0000039&#0000041">',
  '<IMG SRC="jav\tascript:alert(\'XSS\');">',
  '<a onmouseover="alert(document.cookie)">xxs link</a>',
  '<BODY onload!#$%&()*~+-_.,:;?@[/|\\]^`=alert("XSS")>',
  '<svg/onload=alert(\'XSS\')>',
  '<INPUT TYPE="IMAGE" SRC="javascript:alert(\'XSS\');">',
  // breaking out of attributes, titles and comments
  '"><script>alert(1)</script>',
  '\'><img src=x onerror=alert(1)>',
  '</TITLE><SCRIPT>alert("XSS");</SCRIPT>',
  '--><script>alert(1)</script><!--',
  '</textarea><script>alert(1)</script>',
  // style, meta and frame vectors
  '<STYLE>@import\'http://xss.invalid/xss.css\';</STYLE>',
  '<META HTTP-EQUIV="refresh" CONTENT="0;url=javascript:alert(\'XSS\');">',
  '<DIV STYLE="background-image: url(javascript:alert(\'XSS\'))">',
  '<iframe src=http://xss.invalid/scriptlet.html <',
  // plain-text vectors that matter in attributes and links
  'javascript:alert(1)',
  '\\";alert(\'XSS\');//',
  '&lt;script&gt;alert(1)&lt;/script&gt;',
]

/** The text as hono/html writes it: & < > " ' escaped. */
export function escapeHtml(text: string): string {
  return text.replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;').replace(/"/g, '&quot;').replace(/'/g, '&#39;')
}
