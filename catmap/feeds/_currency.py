"""Currency tables used by :mod:`catmap.feeds.normalize`: ISO 4217 codes, symbols and common words.

The tables are written here from memory of ISO 4217 (alphabetic codes and minor units); the
tests check every code against pycountry's copy of the ISO 4217 list.
"""

from __future__ import annotations

# ISO 4217 alphabetic codes (written from memory; checked in tests/test_normalize.py against
# pycountry, which settled BGN and ZWL (withdrawn), XAD, XCG and ZWG (new)). Includes fund
# codes and the X.. codes for precious metals and special units.
ISO_4217_CODES: frozenset[str] = frozenset(
    """
    AED AFN ALL AMD AOA ARS AUD AWG AZN BAM BBD BDT BHD BIF BMD BND BOB BOV BRL BSD BTN
    BWP BYN BZD CAD CDF CHE CHF CHW CLF CLP CNY COP COU CRC CUP CVE CZK DJF DKK DOP DZD EGP
    ERN ETB EUR FJD FKP GBP GEL GHS GIP GMD GNF GTQ GYD HKD HNL HTG HUF IDR ILS INR IQD IRR
    ISK JMD JOD JPY KES KGS KHR KMF KPW KRW KWD KYD KZT LAK LBP LKR LRD LSL LYD MAD MDL MGA
    MKD MMK MNT MOP MRU MUR MVR MWK MXN MXV MYR MZN NAD NGN NIO NOK NPR NZD OMR PAB PEN PGK
    PHP PKR PLN PYG QAR RON RSD RUB RWF SAR SBD SCR SDG SEK SGD SHP SLE SOS SRD SSP STN SVC
    SYP SZL THB TJS TMT TND TOP TRY TTD TWD TZS UAH UGX USD USN UYI UYU UYW UZS VED VES VND
    VUV WST XAD XAF XAG XAU XBA XBB XBC XBD XCD XCG XDR XOF XPD XPF XPT XSU XTS XUA XXX YER
    ZAR ZMW ZWG
    """.split()
)

# Minor units (digits after the decimal point) where they differ from the usual 2 (ISO 4217).
MINOR_UNITS: dict[str, int] = {
    **dict.fromkeys(
        "BIF CLP DJF GNF ISK JPY KMF KRW PYG RWF UGX UYI VND VUV XAF XOF XPF".split(), 0
    ),
    **dict.fromkeys("BHD IQD JOD KWD LYD OMR TND".split(), 3),
    "CLF": 4,
    "UYW": 4,
}

# Symbols and prefixed symbols. A bare "$" is read as USD and a bare "¥" as JPY: both are
# shared by several currencies, so parse_price prefers the feed's default currency when that
# default uses the same symbol (see DOLLAR_CURRENCIES / YEN_CURRENCIES).
SYMBOLS: dict[str, str] = {
    "€": "EUR",
    "£": "GBP",
    "$": "USD",
    "us$": "USD",
    "u$s": "USD",
    "c$": "CAD",
    "ca$": "CAD",
    "a$": "AUD",
    "au$": "AUD",
    "nz$": "NZD",
    "hk$": "HKD",
    "s$": "SGD",
    "mx$": "MXN",
    "r$": "BRL",
    "¥": "JPY",
    "円": "JPY",
    "元": "CNY",
    "₹": "INR",
    "₩": "KRW",
    "₽": "RUB",
    "₺": "TRY",
    "₪": "ILS",
    "฿": "THB",
    "₫": "VND",
    "₱": "PHP",
    "₴": "UAH",
    "₦": "NGN",
    "₡": "CRC",
    "₲": "PYG",
    "₸": "KZT",
    "₼": "AZN",
    "₾": "GEL",
    "zł": "PLN",
    "zl": "PLN",
    "kč": "CZK",
    "ft": "HUF",
    "lei": "RON",
    "fr.": "CHF",
    "sfr.": "CHF",
    "sfr": "CHF",
    "chf.": "CHF",
}

# Currencies written with a plain "$" or "¥" at home: a bare symbol means the feed's default
# currency when the default is one of these.
DOLLAR_CURRENCIES = frozenset(
    "USD CAD AUD NZD HKD SGD MXN TWD BSD BBD BZD BMD BND FJD GYD JMD KYD LRD NAD SBD SRD TTD "
    "XCD ARS CLP COP CUP DOP UYU".split()
)
YEN_CURRENCIES = frozenset({"JPY", "CNY"})
KRONA_CURRENCIES = frozenset({"SEK", "NOK", "DKK", "ISK"})

# Words for currencies in English, French, German and Spanish (lower case, accents kept and
# also listed without). Ambiguous words ("peso", "crown") are left out on purpose.
WORDS: dict[str, str] = {
    **dict.fromkeys(["euro", "euros", "eur."], "EUR"),
    **dict.fromkeys(
        [
            "dollar", "dollars", "us dollar", "us dollars", "dollar us", "dollars us",
            "dollar americain", "dollars americains", "dólar", "dolar", "dólares", "dolares",
            "us-dollar", "us-dollars", "dólar estadounidense", "dolar estadounidense",
        ],
        "USD",
    ),
    **dict.fromkeys(
        [
            "pound", "pounds", "pound sterling", "pounds sterling", "sterling", "gbp.",
            "livre", "livres", "livre sterling", "livres sterling", "pfund", "pfund sterling",
            "britisches pfund", "libra", "libras", "libra esterlina", "libras esterlinas",
        ],
        "GBP",
    ),
    **dict.fromkeys(["yen", "yens", "yenes"], "JPY"),
    **dict.fromkeys(["yuan", "renminbi", "rmb"], "CNY"),
    **dict.fromkeys(
        [
            "franc suisse", "francs suisses", "schweizer franken", "franken", "franco suizo",
            "francos suizos", "swiss franc", "swiss francs",
        ],
        "CHF",
    ),
    **dict.fromkeys(["zloty", "złoty", "zlotys", "złotys", "zloty polonais"], "PLN"),
    **dict.fromkeys(["canadian dollar", "canadian dollars", "dollar canadien"], "CAD"),
    **dict.fromkeys(["australian dollar", "australian dollars"], "AUD"),
    **dict.fromkeys(["rupee", "rupees", "roupie", "roupies"], "INR"),
    **dict.fromkeys(["rouble", "roubles", "ruble", "rubles", "rubel"], "RUB"),
    **dict.fromkeys(["forint", "forints"], "HUF"),
    **dict.fromkeys(["couronne suedoise", "swedish krona", "schwedische krone"], "SEK"),
    **dict.fromkeys(["couronne danoise", "danish krone", "danische krone"], "DKK"),
    **dict.fromkeys(["couronne norvegienne", "norwegian krone"], "NOK"),
}
