package notify

import (
	"errors"
	"net/url"
)

// RedactURL returns raw fit for a log line or an error: its userinfo and
// every query value (a ?token= many receivers ask for) replaced by xxxxx;
// scheme, host, path and query keys stay, to say which receiver. A URL
// that does not parse gives a placeholder, never the text.
func RedactURL(raw string) string {
	u, err := url.Parse(raw)
	if err != nil {
		return "(a URL that does not parse)"
	}
	return redact(u)
}

func redact(u *url.URL) string {
	c := *u
	if c.User != nil {
		c.User = url.User("xxxxx")
	}
	if c.RawQuery != "" {
		q := c.Query()
		for _, vs := range q {
			for i := range vs {
				vs[i] = "xxxxx"
			}
		}
		c.RawQuery = q.Encode()
	}
	return c.String()
}

// requestURL parses a notifier's URL (adding path elements, before its
// query) and gives an error that does not show the URL when it does not
// parse.
func requestURL(raw string, elem ...string) (string, error) {
	u, err := url.Parse(raw)
	if err != nil {
		var ue *url.Error
		if errors.As(err, &ue) {
			err = ue.Err // the reason, without the URL
		}
		return "", errors.New("the configured URL does not parse: " + err.Error())
	}
	if len(elem) > 0 {
		u = u.JoinPath(elem...)
	}
	return u.String(), nil
}
