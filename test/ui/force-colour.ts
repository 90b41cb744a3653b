// Ink colours through chalk, which reads FORCE_COLOR once, when it loads. A test file that
// imports this module before anything that loads Ink gets frames with 16-colour SGR codes
// (level 1), so it can check the colour and weight a tone or a mark gives, not only the text.
process.env.FORCE_COLOR = '1';
