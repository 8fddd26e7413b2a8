"""Read loadstack's expression syntax (+ - * / ^ ( ) and a || b) into sympy.

Precedence, high to low, as the language defines it: ^ (right-associative),
unary minus, * /, ||, + -.  Names (dotted ones too) become sympy symbols of the
same text; a || b is a*b/(a+b)."""
import re

import sympy as sp

TOKEN = re.compile(r"\s*(?:(\d+\.?\d*(?:[eE][-+]?\d+)?|\.\d+(?:[eE][-+]?\d+)?)|([A-Za-z_][A-Za-z_0-9.]*)|(\|\||[-+*/^()]))")


def tokens(text):
    pos, out = 0, []
    text = text.rstrip()
    while pos < len(text):
        m = TOKEN.match(text, pos)
        if not m:
            raise ValueError("cannot read %r at %d" % (text, pos))
        out.append(m.groups())
        pos = m.end()
    return out


class Reader:
    def __init__(self, text):
        self.t = tokens(text)
        self.i = 0

    def peek(self):
        return self.t[self.i][2] if self.i < len(self.t) else None

    def take(self):
        self.i += 1
        return self.t[self.i - 1]

    def expr(self):          # + -
        v = self.par()
        while self.peek() in ("+", "-"):
            op = self.take()[2]
            w = self.par()
            v = v + w if op == "+" else v - w
        return v

    def par(self):           # ||
        v = self.term()
        while self.peek() == "||":
            self.take()
            w = self.term()
            v = v * w / (v + w)
        return v

    def term(self):          # * /
        v = self.unary()
        while self.peek() in ("*", "/"):
            op = self.take()[2]
            w = self.unary()
            v = v * w if op == "*" else v / w
        return v

    def unary(self):
        if self.peek() == "-":
            self.take()
            return -self.unary()
        return self.power()

    def power(self):
        v = self.atom()
        if self.peek() == "^":
            self.take()
            return v ** self.unary()
        return v

    def atom(self):
        num, name, op = self.take()
        if num:
            return sp.Rational(num)
        if name:
            return sp.Symbol(name)
        if op == "(":
            v = self.expr()
            if self.take()[2] != ")":
                raise ValueError("')' expected")
            return v
        raise ValueError("unexpected %r" % op)


def parse(text):
    r = Reader(text)
    v = r.expr()
    if r.i != len(r.t):
        raise ValueError("trailing text in %r" % text)
    return v
